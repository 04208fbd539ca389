"""Surveys area of the domain."""
