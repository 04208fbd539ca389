"""Checks area of the domain."""
