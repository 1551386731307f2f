"""io stage."""
