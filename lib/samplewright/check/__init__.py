"""check stage."""
