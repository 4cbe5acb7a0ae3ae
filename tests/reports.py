"""Reading built reports in tests: PDF text (pdftotext, or pypdf where it is missing) and
whitespace-normalised text, so figures formatted with thin and non-breaking spaces compare."""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path


def pdf_text(path: Path) -> str:
    if shutil.which("pdftotext"):
        return subprocess.run(["pdftotext", "-layout", str(path), "-"], capture_output=True, text=True,
                              check=True).stdout
    import pypdf

    return "\n".join(page.extract_text() for page in pypdf.PdfReader(str(path)).pages)


def norm(s: str) -> str:
    return " ".join(s.replace("\u00a0", " ").replace("\u2009", " ").split())
