"""report step."""
