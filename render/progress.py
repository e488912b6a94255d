"""A small progress bar on stderr for work that takes more than a second."""

from __future__ import annotations

import sys
import time


class Progress:
    """Count finished steps of ``total`` and redraw one line on stderr.

    On a terminal the line is redrawn in place; elsewhere (logs, CI) one line is
    written per step so the output stays readable. ``enabled=False`` silences it.
    """

    def __init__(self, total: int, label: str, enabled: bool = True, stream=None):
        self.total, self.label, self.done = max(total, 1), label, 0
        self.stream = stream or sys.stderr
        self.enabled = enabled
        self.start = time.perf_counter()
        self.live = enabled and getattr(self.stream, "isatty", lambda: False)()

    def __call__(self, note: str = "") -> None:
        """Mark one step done; ``note`` says what it was."""
        self.done += 1
        if not self.enabled:
            return
        elapsed = time.perf_counter() - self.start
        remaining = elapsed / self.done * (self.total - self.done)
        filled = int(24 * self.done / self.total)
        bar = "#" * filled + "." * (24 - filled)
        line = (f"{self.label} [{bar}] {self.done}/{self.total} {elapsed:5.1f}s "
                f"(~{remaining:.0f}s left) {note}")
        if self.live:
            end = "\n" if self.done >= self.total else ""
            self.stream.write("\r" + line[:110].ljust(110) + end)
        else:
            self.stream.write(line + "\n")
        self.stream.flush()
