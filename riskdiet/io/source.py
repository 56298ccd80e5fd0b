"""What a study file is: the kinds accepted and the checksum that identifies it."""

from __future__ import annotations

import hashlib
from pathlib import Path

ACCEPTED = ".xlsx (Excel workbook) or .json (riskdiet study file)"
MISTAKES = {
    ".xls": "an old-style Excel file",
    ".ods": "an OpenDocument spreadsheet",
    ".csv": "a CSV text file",
    ".xlsm": "a macro-enabled workbook",
}


def file_sha256(path: Path) -> str:
    """SHA-256 of a file's bytes, hex."""
    digest = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 16), b""):
            digest.update(block)
    return digest.hexdigest()
