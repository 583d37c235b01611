"""store stage."""
