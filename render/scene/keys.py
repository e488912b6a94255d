"""Reading one TOML table of a scene file, key by key, with one-line errors.

Every value is checked where it is read; keys nobody read are refused with a
suggestion, so a misspelt key never passes silently.
"""

from __future__ import annotations

import difflib
import math

from cloakview.optics.errors import InputError


def _finite(value) -> bool:
    """Whether a TOML number is finite as a float (a huge integer is not)."""
    try:
        return math.isfinite(float(value))
    except OverflowError:
        return False


class KeyReader:
    """One TOML table being read: tracks its path for messages and rejects unknown keys."""

    def __init__(self, data, path: str, source: str):
        if not isinstance(data, dict):
            raise InputError(path, data, "must be a table", source)
        self.data, self.path, self.source = data, path, source
        self.used: set[str] = set()

    def key(self, name: str) -> str:
        """The dotted key of ``name`` in the file, for messages."""
        return f"{self.path}.{name}" if self.path else name

    def error(self, name: str, value, rule: str) -> InputError:
        """The one-line error for key ``name``."""
        return InputError(self.key(name), value, rule, self.source)

    def has(self, name: str) -> bool:
        """Whether the table holds ``name``."""
        return name in self.data

    def get(self, name: str, default=None):
        """The raw value of ``name`` (marked as read)."""
        self.used.add(name)
        return self.data.get(name, default)

    def missing(self, name: str, rule: str) -> InputError:
        """The error for a required key that is absent (or misspelt: then say so)."""
        close = difflib.get_close_matches(name, [k for k in self.data if k not in self.used],
                                          n=1, cutoff=0.8)
        if close:
            return self.error(close[0], self.data[close[0]], f"unknown key; did you mean "
                              f"'{name}'?")
        return self.error(name, None, rule)

    def number(self, name: str, default=None, *, positive=False, low=None, high=None,
               required=False) -> float:
        """A finite number, optionally positive or within ``[low, high]``."""
        value = self.get(name, default)
        if value is None:
            if required:
                raise self.missing(name, "is required")
            return None
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise self.error(name, value, "must be a number")
        if not _finite(value):
            raise self.error(name, value, "must be a finite number")
        value = float(value)
        if positive and value <= 0:
            raise self.error(name, value, "must be greater than 0")
        if (low is not None and value < low) or (high is not None and value > high):
            rule = (f"must lie between {low:g} and {high:g}" if low is not None and high is not
                    None else f"must be at least {low:g}" if low is not None
                    else f"must be at most {high:g}")
            raise self.error(name, value, rule)
        return value

    def integer(self, name: str, default, low: int, high: int) -> int:
        """A whole number within ``[low, high]``."""
        value = self.get(name, default)
        if isinstance(value, bool) or not isinstance(value, int):
            raise self.error(name, value, "must be a whole number")
        if not low <= value <= high:
            raise self.error(name, value, f"must lie between {low} and {high}")
        return value

    def boolean(self, name: str, default: bool) -> bool:
        """``true`` or ``false``."""
        value = self.get(name, default)
        if not isinstance(value, bool):
            raise self.error(name, value, "must be true or false")
        return value

    def string(self, name: str, default=None, required=False) -> str:
        """A string."""
        value = self.get(name, default)
        if value is None and required:
            raise self.missing(name, "is required")
        if value is not None and not isinstance(value, str):
            raise self.error(name, value, "must be a string")
        return value

    def vector(self, name: str, length: int, default=None, required=False):
        """A list of ``length`` finite numbers [mm], as a tuple."""
        value = self.get(name, default)
        if value is None:
            if required:
                raise self.missing(name, f"is required: a list of {length} numbers in mm")
            return None
        if (not isinstance(value, (list, tuple)) or len(value) != length
                or not all(isinstance(v, (int, float)) and not isinstance(v, bool)
                           and _finite(v) for v in value)):
            raise self.error(name, value, f"must be a list of {length} finite numbers in mm")
        return tuple(float(v) for v in value)

    def finish(self) -> None:
        """Refuse any key nobody read, with a suggestion for a misspelling."""
        unknown = sorted(set(self.data) - self.used)
        if unknown:
            name = unknown[0]
            close = difflib.get_close_matches(name, sorted(self.used), n=1)
            hint = f"; did you mean '{close[0]}'?" if close else ""
            raise self.error(name, self.data[name], f"unknown key{hint}")
