"""parts stage."""
