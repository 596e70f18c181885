"""Output folders that appear whole or not at all.

A command that writes several files builds them in a hidden temporary folder
beside the destination and renames it into place at the end, so that an
interrupted run leaves no half-written report.  A non-empty destination is
replaced only when asked (``--force``).
"""

from __future__ import annotations

import contextlib
import shutil
import tempfile
from pathlib import Path

from ttvkit.errors import InputError, OutputExistsError

__all__ = ["staged_folder", "check_folder"]


def check_folder(path: "str | Path", force: bool) -> Path:
    """Refuse a non-empty existing folder (or a file) unless ``force``."""
    path = Path(path)
    if path.exists() and not path.is_dir():
        raise OutputExistsError(f"{path}: exists and is not a folder")
    if path.is_dir() and any(path.iterdir()) and not force:
        raise OutputExistsError(f"{path}: folder is not empty; pass --force to replace it")
    parent = path.resolve().parent
    if not parent.exists():
        raise InputError(f"{path}: the parent folder {parent} does not exist")
    return path


@contextlib.contextmanager
def staged_folder(path: "str | Path", force: bool):
    """Yield a temporary folder that replaces ``path`` when the block succeeds."""
    path = check_folder(path, force)
    parent = path.resolve().parent
    stage = Path(tempfile.mkdtemp(prefix=f".{path.name}.", suffix=".part", dir=parent))
    try:
        yield stage
    except BaseException:
        shutil.rmtree(stage, ignore_errors=True)
        raise
    old = None
    if path.exists():
        old = Path(tempfile.mkdtemp(prefix=f".{path.name}.", suffix=".old", dir=parent))
        old.rmdir()
        path.rename(old)
    stage.rename(path)
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)
