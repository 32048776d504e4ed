"""The math reader: tokens, chains and the expression tree."""
