"""Writing output files safely: never over an existing file unless asked, never half-written."""

from __future__ import annotations

import os
import tempfile
from collections.abc import Callable
from pathlib import Path

from riskdiet.errors import OutputExistsError


def check_writable(path: Path, force: bool, inputs: tuple[Path, ...] = ()) -> None:
    """Refuse to overwrite an input, or an existing output without ``force``."""
    path = Path(path)
    for source in inputs:
        if source.exists() and path.exists() and path.resolve() == Path(source).resolve():
            raise OutputExistsError(f"{path} is the input file; riskdiet never overwrites its "
                                    "input. Choose another output name.")
    if path.exists() and not force:
        raise OutputExistsError(f"{path} already exists; use --force to replace it.")
    if path.exists() and path.is_dir():
        raise OutputExistsError(f"{path} is a folder, not a file.")


def write_atomic(path: Path, write: Callable[[Path], None], force: bool = False,
                 inputs: tuple[Path, ...] = ()) -> Path:
    """Write a file through ``write(tmp_path)`` then rename it into place.

    Parameters
    ----------
    path : Path
        Final file.
    write : callable
        Writes the whole file to the temporary path it is given.
    force : bool
        Replace an existing file.
    inputs : tuple of Path
        Files that must never be overwritten (the study being read).
    """
    path = Path(path)
    check_writable(path, force, inputs)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    os.close(fd)
    try:
        write(Path(tmp))
        # mkstemp creates the file private (0600); give it the usual permissions
        mask = os.umask(0)
        os.umask(mask)
        os.chmod(tmp, 0o666 & ~mask)
        os.replace(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)
    return path
