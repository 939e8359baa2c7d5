"""A PDF of the HTML report, printed by a headless Chromium (Debian package
``chromium``) with the report's own A4 print style.

:func:`find_chromium` says whether one is installed; :func:`write_pdf`
prints an HTML file to PDF, refusing with :class:`WorkbookError` (one line)
when none is.
"""
from __future__ import annotations

import shutil
import subprocess
import tempfile
from pathlib import Path

from toolkit.errors import WorkbookError

__all__ = ["CHROMIUM_NAMES", "find_chromium", "require_chromium", "write_pdf"]

CHROMIUM_NAMES = ("chromium", "chromium-browser", "google-chrome", "google-chrome-stable")


def find_chromium():
    """The path of a Chromium (or Chrome) executable on PATH, or None."""
    for name in CHROMIUM_NAMES:
        p = shutil.which(name)
        if p:
            return p
    return None


def require_chromium() -> str:
    """The Chromium executable; WorkbookError with the way to install it if there is none."""
    exe = find_chromium()
    if exe is None:
        raise WorkbookError("--pdf needs a headless Chromium, and none is on PATH "
                            "(install it, e.g. `apt-get install chromium` on Debian)")
    return exe


def write_pdf(html_path, pdf_path, timeout=120) -> Path:
    """Print ``html_path`` to ``pdf_path`` (A4, the report's ``@page`` margins and footer)."""
    exe = require_chromium()
    html_path, pdf_path = Path(html_path).resolve(), Path(pdf_path).resolve()
    with tempfile.TemporaryDirectory() as profile:
        cmd = [exe, "--headless", "--no-sandbox", "--disable-gpu", f"--user-data-dir={profile}",
               "--no-pdf-header-footer", "--print-to-pdf-no-header", f"--print-to-pdf={pdf_path}",
               html_path.as_uri()]
        try:
            done = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout)
        except subprocess.TimeoutExpired:
            raise WorkbookError(f"Chromium did not print {html_path.name} within {timeout} s") from None
    if done.returncode != 0 or not pdf_path.is_file() or pdf_path.stat().st_size == 0:
        last = (done.stderr.strip().splitlines() or ["no message"])[-1]
        raise WorkbookError(f"Chromium could not print {html_path.name} to PDF: {last}")
    return pdf_path
