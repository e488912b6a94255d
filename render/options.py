"""Parsing of command-line values shared by the commands."""

from __future__ import annotations

from optics.errors import InputError


def parse_triple(text: str, option: str) -> tuple[float, float, float]:
    """Three finite numbers [mm] from ``"x,y,z"``."""
    try:
        values = tuple(float(v) for v in text.split(","))
    except ValueError:
        values = ()
    if len(values) != 3 or not all(v == v and abs(v) != float("inf") for v in values):
        raise InputError(option, text, "must be three finite numbers in mm, like 0,1250,-1500")
    return values


def parse_size(text: str) -> tuple[int, int]:
    """(width, height) in pixels from ``"WxH"``."""
    try:
        width, height = (int(v) for v in text.lower().split("x"))
    except ValueError:
        raise InputError("--size", text, "must be WIDTHxHEIGHT in pixels, like 640x360") from None
    if not (16 <= width <= 8192 and 16 <= height <= 8192):
        raise InputError("--size", text, "each side must be 16 to 8192 pixels")
    return width, height
