"""The one error type for bad user input.

Physical edge cases (a ray that misses a lens, total internal reflection)
are not errors: the tracer marks them in masks. Only input a person typed
or wrote in a file that cannot describe a real device raises
:class:`InputError`.
"""

from __future__ import annotations

#: Longest echo of a bad value in an error message [characters].
_VALUE_CHARS = 80


class InputError(ValueError):
    """Bad input, described in one line: where, which key, which value, which rule.

    Parameters
    ----------
    key : str
        The option, scene-file key or parameter name that holds the value.
    value : object
        The offending value, shown with ``repr``-like formatting.
    rule : str
        What the value must satisfy, phrased so the user knows what to change.
    source : str, optional
        The file (or ``"command line"``) the value came from.
    """

    def __init__(self, key: str, value: object, rule: str, source: str | None = None):
        self.key = key
        self.value = value
        self.rule = rule
        self.source = source
        super().__init__(self._line())

    def _line(self) -> str:
        where = f"{self.source}: " if self.source else ""
        value = repr(self.value)
        if len(value) > _VALUE_CHARS:  # say what was meant, not every character of it
            value = value[:_VALUE_CHARS] + f"... ({len(value)} characters)"
        key = " ".join(str(self.key).split())  # a key holding a newline stays on one line
        return f"{where}{key} = {' '.join(value.split(chr(10)))}: {self.rule}"

    def with_source(self, source: str) -> InputError:
        """Return the same error attributed to ``source`` (kept if already set)."""
        if self.source:
            return self
        return InputError(self.key, self.value, self.rule, source)


def require_finite_positive(key: str, value: float, unit: str = "mm") -> float:
    """Return ``float(value)`` or raise :class:`InputError` unless finite and > 0."""
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise InputError(key, value, "must be a number") from None
    if number != number or number in (float("inf"), float("-inf")):
        raise InputError(key, value, f"must be a finite number of {unit}")
    if number <= 0.0:
        raise InputError(key, value, f"must be greater than 0 {unit}")
    return number
