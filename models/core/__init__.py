"""Core area of the domain."""
