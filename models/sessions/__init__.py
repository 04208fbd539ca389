"""Sessions area of the domain."""
