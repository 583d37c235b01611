"""pipeline stage."""
