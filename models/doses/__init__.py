"""Doses area of the domain."""
