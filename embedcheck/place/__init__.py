"""place stage."""
