"""price stage."""
