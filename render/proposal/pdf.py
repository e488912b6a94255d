"""The report as PDF: the same page printed by headless Chromium (its print CSS applies).

Chromium is not a Python package: install it from the system's packages (Debian:
``apt-get install chromium``). Without it the PDF is skipped with a one-line notice.
"""

from __future__ import annotations

import shutil
import subprocess
import tempfile
from pathlib import Path

from cloakview.render.files import atomic_write

#: Flags for a headless, offline, throw-away Chromium (no GPU, no network services).
CHROMIUM_FLAGS = ("--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
                  "--no-first-run", "--disable-background-networking",
                  "--disable-component-update", "--disable-sync")
PRINT_SECONDS = 180


def chromium() -> str | None:
    """Path of a Chromium executable on this machine, or None."""
    return shutil.which("chromium") or shutil.which("chromium-browser") or \
        shutil.which("google-chrome")


def print_pdf(html_path: Path, pdf_path: Path) -> str | None:
    """Print ``html_path`` to ``pdf_path`` (atomically); return a notice if it could not be."""
    browser = chromium()
    if browser is None:
        return ("report.pdf skipped: Chromium is not installed (Debian: apt-get install "
                "chromium); index.html prints the same from any browser")

    def run(temp):
        with tempfile.TemporaryDirectory(prefix="cloakview-chromium-") as profile:
            subprocess.run([browser, *CHROMIUM_FLAGS, f"--user-data-dir={profile}",
                            "--no-pdf-header-footer", f"--print-to-pdf={temp}",
                            Path(html_path).resolve().as_uri()],
                           check=True, capture_output=True, timeout=PRINT_SECONDS)
        if not Path(temp).is_file() or Path(temp).stat().st_size == 0:
            raise RuntimeError("Chromium wrote no PDF")

    try:
        atomic_write(Path(pdf_path), run)
    except (OSError, subprocess.SubprocessError, RuntimeError) as error:
        return f"report.pdf skipped: Chromium could not print the page ({str(error)[:100]})"
    return None
