"""Incidents area of the domain."""
