"""sheets stage."""
