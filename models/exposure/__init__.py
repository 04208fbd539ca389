"""Exposure area of the domain."""
