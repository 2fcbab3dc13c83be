"""Note layer: figures, the note's context, the report renderer, JSON and JUnit writers."""
