"""distributions stage."""
