"""Instruments area of the domain."""
