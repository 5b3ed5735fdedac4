"""design step."""
