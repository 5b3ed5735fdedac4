"""panel step."""
