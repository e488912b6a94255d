"""Rendering, measuring and reporting what a visitor sees through a cloak exhibit."""
