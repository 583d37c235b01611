"""fit stage."""
