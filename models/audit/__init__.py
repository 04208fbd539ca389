"""Audit area of the domain."""
