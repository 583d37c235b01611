"""core stage."""
