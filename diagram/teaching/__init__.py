"""teaching."""
