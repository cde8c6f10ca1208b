"""design."""
