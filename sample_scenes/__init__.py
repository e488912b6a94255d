"""Bundled demo exhibits (invented scenarios) and the script that draws their pictures."""
