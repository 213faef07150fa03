"""data stage."""
