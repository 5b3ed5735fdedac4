"""fit step."""
