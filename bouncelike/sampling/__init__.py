"""sampling layer."""
