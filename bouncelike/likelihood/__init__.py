"""likelihood layer."""
