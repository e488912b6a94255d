"""Lens optics for cloakview: materials, lenses, ABCD matrices, the cloak designer, the tracer.

This package knows nothing about images or scenes.
"""
