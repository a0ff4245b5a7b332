"""contract stage."""
