"""repair stage."""
