"""The context stage: vocabulary, declarations, assumptions, definitions and shapes of a document."""
