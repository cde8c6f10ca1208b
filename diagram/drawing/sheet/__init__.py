"""drawing.sheet."""
