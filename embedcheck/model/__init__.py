"""model stage."""
