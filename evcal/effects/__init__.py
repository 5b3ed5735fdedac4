"""effects step."""
