"""score stage."""
