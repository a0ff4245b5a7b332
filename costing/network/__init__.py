"""network stage."""
