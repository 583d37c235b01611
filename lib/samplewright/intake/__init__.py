"""intake stage."""
