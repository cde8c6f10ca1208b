"""The shipped map templates (SVG artwork, read as data, never executed)."""
