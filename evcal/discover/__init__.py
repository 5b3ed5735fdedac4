"""discover step."""
