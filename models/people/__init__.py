"""People area of the domain."""
