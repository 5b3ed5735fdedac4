"""io step."""
