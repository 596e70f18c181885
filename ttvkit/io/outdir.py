"""Output folders that never lose a user's file.

A command that writes several files builds them in a hidden staging folder
inside the destination and moves them into place at the end, so that an
interrupted run leaves no half-written report (the staging folder is
removed on any exception, and the command line turns SIGTERM into one).
Each output folder holds a manifest (``.ttvkit-manifest.json``) naming the
files ttvkit wrote there: ``force`` replaces only those.  A folder that
holds anything else, or the command's own inputs, is refused.  Folders and
files get the permissions the umask allows (not the 0700/0600 of Python's
temporary files), so collaborators can read them.
"""

from __future__ import annotations

import contextlib
import json
import os
import shutil
import tempfile
from pathlib import Path

from ttvkit.errors import InputError, OutputExistsError

__all__ = ["staged_folder", "check_folder", "MANIFEST", "written_by_ttvkit", "apply_umask"]

#: The file in each output folder that lists what ttvkit wrote there.
MANIFEST = ".ttvkit-manifest.json"
_STAGE_PREFIX = ".ttvkit-stage-"


def _umask() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def apply_umask(path: "str | Path", directory: bool | None = None) -> None:
    """Give ``path`` the default permissions under the current umask (recursively for folders)."""
    path = Path(path)
    mask = _umask()
    is_dir = path.is_dir() if directory is None else directory
    os.chmod(path, (0o777 if is_dir else 0o666) & ~mask)
    if is_dir:
        for child in path.rglob("*"):
            os.chmod(child, (0o777 if child.is_dir() else 0o666) & ~mask)


def written_by_ttvkit(folder: "str | Path") -> set:
    """Names (top-level entries) that the folder's manifest says ttvkit wrote."""
    try:
        data = json.loads((Path(folder) / MANIFEST).read_text())
        return {str(x) for x in data.get("files", [])}
    except (OSError, ValueError, AttributeError):
        return set()


def _foreign(folder: Path) -> list:
    """Entries of ``folder`` ttvkit did not write (leftover staging of ttvkit's own excepted)."""
    ours = written_by_ttvkit(folder) | {MANIFEST}
    return sorted(p.name for p in folder.iterdir()
                  if p.name not in ours and not p.name.startswith(_STAGE_PREFIX))


def check_folder(path: "str | Path", force: bool, inputs=()) -> Path:
    """Refuse an output folder that would lose a file ttvkit did not write.

    Parameters
    ----------
    path : str or Path
        The output folder (new, empty, or an earlier ttvkit output with ``force``).
    force : bool
        Replace ttvkit's own earlier outputs in it.
    inputs : sequence of paths
        The command's input files: a folder holding any of them is refused.
    """
    path = Path(path)
    if path.exists() and not path.is_dir():
        raise OutputExistsError(f"{path}: exists and is not a folder")
    parent = path.resolve().parent
    if not parent.exists():
        raise InputError(f"{path}: the parent folder {parent} does not exist")
    if not parent.is_dir():
        raise InputError(f"{path}: {parent} is a file, not a folder")
    here = path.resolve()
    for item in inputs:
        if item is None:
            continue
        source = Path(item).resolve()
        if source == here or here in source.parents:
            raise OutputExistsError(f"{path}: the output folder holds the input {item}; "
                                    "write the output to another folder")
    if path.is_dir():
        entries = [p for p in path.iterdir() if not p.name.startswith(_STAGE_PREFIX)]
        if entries and not force:
            raise OutputExistsError(f"{path}: folder is not empty; pass --force to replace "
                                    "ttvkit's earlier output in it")
        foreign = _foreign(path)
        if foreign:
            shown = ", ".join(foreign[:8]) + (" ..." if len(foreign) > 8 else "")
            raise OutputExistsError(f"{path}: holds files ttvkit did not write ({shown}); "
                                    "--force replaces only ttvkit's own outputs: choose another folder")
    return path


@contextlib.contextmanager
def staged_folder(path: "str | Path", force: bool, inputs=()):
    """Yield a staging folder whose content replaces ttvkit's earlier output in ``path``."""
    path = check_folder(path, force, inputs)
    created = not path.exists()
    if created:
        path.mkdir()
        apply_umask(path, directory=True)
    stage = Path(tempfile.mkdtemp(prefix=_STAGE_PREFIX, dir=path))
    try:
        yield stage
        _commit(stage, path)
    except BaseException:
        shutil.rmtree(stage, ignore_errors=True)
        if created and path.exists() and not any(path.iterdir()):
            path.rmdir()
        raise


def _commit(stage: Path, path: Path) -> None:
    """Move the staged entries into ``path``, drop ttvkit's stale ones, write the manifest."""
    apply_umask(stage, directory=True)
    new = sorted(p.name for p in stage.iterdir())
    for name in written_by_ttvkit(path) - set(new):
        old = path / name
        if old.is_dir() and not old.is_symlink():
            shutil.rmtree(old, ignore_errors=True)
        elif old.exists() or old.is_symlink():
            old.unlink()
    for name in new:
        target = path / name
        if target.is_dir() and not target.is_symlink():
            shutil.rmtree(target)
        os.replace(stage / name, target)
    stage.rmdir()
    # staging folders left by an earlier run that was killed outright (SIGKILL, a power cut): only
    # ttvkit makes folders of this prefix, and this run's output has now replaced theirs
    for stale in path.glob(_STAGE_PREFIX + "*"):
        if stale.is_dir() and not stale.is_symlink():
            shutil.rmtree(stale, ignore_errors=True)
    manifest = path / MANIFEST
    manifest.write_text(json.dumps({"written_by": "ttvkit", "files": new}, indent=1))
    apply_umask(manifest, directory=False)
