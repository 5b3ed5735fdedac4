"""plan step."""
