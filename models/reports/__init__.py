"""Reports area: exports and documents that read across every other area."""
