"""Due area of the domain."""
