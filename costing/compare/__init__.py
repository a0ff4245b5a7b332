"""compare stage."""
