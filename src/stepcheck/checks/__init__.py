"""Checks that need no numbers: index bookkeeping, shapes, layout."""
