"""studies stage."""
