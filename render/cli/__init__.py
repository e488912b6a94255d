"""The ``cloakview`` command line: parses, calls :mod:`cloakview.render.api`, prints."""
