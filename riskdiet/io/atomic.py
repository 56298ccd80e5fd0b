"""Writing output files safely: never over an existing file unless asked, never half-written.

One command's outputs appear together or not at all: an :class:`OutputSet`
checks every path before the computation starts (exists, is the input, cannot
be created there), stages each file under a temporary name beside its final
name, and renames them all into place only when every file has been written.
If anything fails or the user interrupts, the staged files (and folders the
set created) are removed.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Callable
from pathlib import Path

from riskdiet.errors import OutputExistsError, RiskdietError


class OutputError(RiskdietError):
    """An output path cannot be written (a file where a folder should be, no permission)."""


def _nearest_existing(path: Path) -> Path:
    parent = path.parent
    while not parent.exists() and parent != parent.parent:
        parent = parent.parent
    return parent


def check_creatable(path: Path) -> None:
    """Refuse, before any work, a path where no file can be created.

    Tries to create (and removes) a temporary file in the nearest existing
    folder above ``path``: the only test that also catches read-only mounts,
    immutable folders and pseudo file systems such as ``/proc``.
    """
    path = Path(path)
    folder = _nearest_existing(path)
    if not folder.is_dir():
        raise OutputError(f"{path}: cannot write here: {folder} is a file, not a folder. "
                          "Choose another output path.")
    try:
        fd, probe = tempfile.mkstemp(prefix=".riskdiet-probe.", dir=folder)
    except OSError as exc:
        raise OutputError(f"{path}: cannot write into {folder} "
                          f"({exc.strerror or type(exc).__name__}). Choose another output "
                          "path.") from None
    os.close(fd)
    os.unlink(probe)


def check_writable(path: Path, force: bool, inputs: tuple[Path, ...] = ()) -> None:
    """Refuse to overwrite an input, an existing output without ``force``, or an unwritable path."""
    path = Path(path)
    for source in inputs:
        if source.exists() and path.exists() and path.resolve() == Path(source).resolve():
            raise OutputExistsError(f"{path} is the input file; riskdiet never overwrites its "
                                    "input. Choose another output name.")
    if path.exists() and not force:
        raise OutputExistsError(f"{path} already exists; use --force to replace it.")
    if path.exists() and path.is_dir():
        raise OutputExistsError(f"{path} is a folder, not a file.")
    check_creatable(path)


class OutputSet:
    """The files of one command, written together or not at all.

    Parameters
    ----------
    force : bool
        Replace existing files.
    inputs : tuple of Path
        Files that must never be overwritten (the study being read).
    """

    def __init__(self, force: bool = False, inputs: tuple[Path, ...] = ()):
        self.force = force
        self.inputs = tuple(Path(p) for p in inputs)
        self.planned: list[Path] = []
        self.staged: list[tuple[Path, Path]] = []
        self.created_dirs: list[Path] = []

    def plan(self, path: str | Path) -> Path:
        """Check one output path now (before the computation); refuse duplicates."""
        path = Path(path)
        if any(path.resolve() == p.resolve() for p in self.planned):
            raise OutputExistsError(f"{path} would be written twice by one command.")
        check_writable(path, self.force, self.inputs)
        self.planned.append(path)
        return path

    def stage(self, path: str | Path, write: Callable[[Path], None]) -> Path:
        """Write one file through ``write(tmp_path)`` under a temporary name beside it."""
        path = Path(path)
        if path not in self.planned:
            self.plan(path)
        missing = []
        parent = path.parent
        while not parent.exists():
            missing.append(parent)
            parent = parent.parent
        try:
            path.parent.mkdir(parents=True, exist_ok=True)
            self.created_dirs += reversed(missing)
            fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
            os.close(fd)
        except OSError as exc:
            raise OutputError(f"{path}: cannot write ({exc.strerror or type(exc).__name__})"
                              ) from None
        self.staged.append((Path(tmp), path))
        try:
            write(Path(tmp))
            # mkstemp creates the file private (0600); give it the usual permissions
            mask = os.umask(0)
            os.umask(mask)
            os.chmod(tmp, 0o666 & ~mask)
        except OSError as exc:
            raise OutputError(f"{path}: cannot write ({exc.strerror or type(exc).__name__})"
                              ) from None
        return path

    def commit(self) -> list[Path]:
        """Rename every staged file into place; returns the final paths in order."""
        done: list[Path] = []
        try:
            for tmp, path in self.staged:
                os.replace(tmp, path)
                done.append(path)
        except OSError as exc:
            raise OutputError(f"{path}: cannot write ({exc.strerror or type(exc).__name__})"
                              ) from None
        finally:
            self.staged = [(t, p) for t, p in self.staged if p not in done]
        return done

    def discard(self) -> None:
        """Remove staged files and the folders this set created (if still empty)."""
        for tmp, _ in self.staged:
            try:
                tmp.unlink()
            except OSError:
                pass
        self.staged = []
        for folder in reversed(self.created_dirs):
            try:
                folder.rmdir()
            except OSError:
                pass
        self.created_dirs = []

    def __enter__(self) -> OutputSet:
        return self

    def __exit__(self, kind, exc, tb) -> None:
        self.discard()


def write_atomic(path: Path, write: Callable[[Path], None], force: bool = False,
                 inputs: tuple[Path, ...] = (), outputs: OutputSet | None = None) -> Path:
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
    outputs : OutputSet, optional
        Stage the file in this set instead (renamed when the set is committed).
    """
    if outputs is not None:
        return outputs.stage(path, write)
    with OutputSet(force, inputs) as own:
        own.stage(path, write)
        return own.commit()[0]
