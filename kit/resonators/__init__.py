"""resonators stage."""
