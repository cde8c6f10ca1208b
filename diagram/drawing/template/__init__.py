"""drawing.template."""
