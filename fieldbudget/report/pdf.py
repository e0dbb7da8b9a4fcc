"""PDF report: the HTML report printed by headless chromium (Debian's ``chromium`` package).

No hand-drawn PDF: the browser lays out the same HTML the reader sees, with
the page size and breaks set by the report's print CSS (A4; the budget on
page 1, traceability, Monte Carlo, record details, software and digest on
page 2 for a budget of ordinary length).
"""

from __future__ import annotations

import os
import shutil
import subprocess
import tempfile
from pathlib import Path

from ..errors import ReportToolMissing

__all__ = ["CHROMIUM_ARGS", "ReportToolMissing", "find_chromium", "html_to_pdf"]

CHROMIUM_ARGS = ("--headless", "--no-sandbox", "--disable-gpu", "--no-first-run", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-pdf-header-footer")


def find_chromium() -> str | None:
    """Path of the chromium executable (``FIELDBUDGET_CHROMIUM`` overrides), or ``None``."""
    env = os.environ.get("FIELDBUDGET_CHROMIUM")
    if env:
        return env if Path(env).exists() else None
    for name in ("chromium", "chromium-browser"):
        found = shutil.which(name)
        if found:
            return found
    return "/usr/bin/chromium" if Path("/usr/bin/chromium").exists() else None


def html_to_pdf(html: str, *, timeout_s: float = 120.0) -> bytes:
    """Print ``html`` to PDF with headless chromium and return the PDF bytes."""
    exe = find_chromium()
    if exe is None:
        raise ReportToolMissing(
            "the PDF report needs chromium, which was not found (looked for 'chromium' on PATH and "
            "/usr/bin/chromium); install it, e.g. 'apt-get install chromium' on Debian, or write HTML "
            "and print it from a browser")
    with tempfile.TemporaryDirectory(prefix="fieldbudget-pdf-") as tmp:
        src, out = Path(tmp) / "report.html", Path(tmp) / "report.pdf"
        src.write_text(html, encoding="utf-8")
        cmd = [exe, *CHROMIUM_ARGS, f"--user-data-dir={Path(tmp) / 'profile'}", f"--print-to-pdf={out}",
               src.as_uri()]
        try:
            proc = subprocess.run(cmd, capture_output=True, timeout=timeout_s, check=False)
        except subprocess.TimeoutExpired:
            raise ReportToolMissing(f"chromium did not finish printing the PDF within {timeout_s:g} s") from None
        if not out.exists() or out.stat().st_size == 0:
            tail = proc.stderr.decode("utf-8", "replace").strip().splitlines()[-3:]
            raise ReportToolMissing(f"chromium did not write the PDF (exit {proc.returncode}): {' | '.join(tail)}")
        return out.read_bytes()
