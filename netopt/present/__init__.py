"""present stage."""
