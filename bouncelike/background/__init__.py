"""background layer."""
