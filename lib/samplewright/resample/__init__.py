"""resample stage."""
