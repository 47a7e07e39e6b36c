"""DEMO DATA: the invented demo shop (see README.md here)."""
