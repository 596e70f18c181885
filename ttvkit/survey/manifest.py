"""What a survey is made of: targets, each a timing table, a system file and its own options.

A survey is named either by a manifest (CSV or ECSV with the columns
``target``, ``table``, ``system`` and, optionally, per-target options) or by
a folder holding, for every target, a timing table ``NAME.ecsv`` (or
``NAME.csv`` with a ``standard`` column) beside its system file
``NAME.toml``.  Paths in a manifest are read relative to the manifest's own
folder.  Nothing is read beyond the file names here: each table and system
is read by the worker that diagnoses it, so that the process running the
survey holds no target's data.
"""

from __future__ import annotations

import re
import warnings
from dataclasses import dataclass, field, fields
from pathlib import Path

from ttvkit.diagnosis.diagnose import DiagnosisOptions
from ttvkit.errors import InputError, TtvkitWarning, located
from ttvkit.io.readers import read_raw_table

__all__ = ["SurveyTarget", "read_manifest", "targets_from_folder", "load_targets", "OPTION_COLUMNS"]

#: Manifest columns that change one target's :class:`DiagnosisOptions` (empty cell: the survey's value).
OPTION_COLUMNS = {"sampled": "bool", "n_steps": "int", "seed": "int", "forecast_years": "float",
                  "timing_precision_s": "float", "now": "float", "hypotheses": "list"}

_SAFE_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9 _+.,()'-]*$")
_TRUE, _FALSE = {"true", "yes", "1", "y"}, {"false", "no", "0", "n"}


@dataclass(frozen=True)
class SurveyTarget:
    """One target of a survey: its name, its files and its own option changes.

    Attributes
    ----------
    name : str
        The target's name; also the name of its report folder.
    table : Path
        Timing table (ECSV written by ttvkit, or CSV with a ``standard`` column).
    system : Path
        System file (TOML).
    options : dict
        Fields of :class:`~ttvkit.diagnosis.DiagnosisOptions` that differ from the survey's.
    """

    name: str
    table: Path
    system: Path
    options: dict = field(default_factory=dict)

    def __post_init__(self):
        check_target_name(self.name)
        allowed = {f.name for f in fields(DiagnosisOptions)}
        unknown = sorted(set(self.options) - allowed)
        if unknown:
            raise InputError(f"target {self.name!r}: unknown option(s) {', '.join(unknown)}")


def check_target_name(name: str, path=None, row: int | None = None) -> str:
    """Refuse a name that cannot be a folder name (slashes, a leading dot, control characters)."""
    if not isinstance(name, str) or not _SAFE_NAME.match(name) or name.endswith((".part", ".old")):
        raise InputError(located(f"target name {name!r} cannot name a report folder: use letters, digits, "
                                 "spaces and _ + . , ( ) ' - (not starting with a dot)", path, row, "target"))
    return name


def _option(kind: str, text: str, path, row: int, column: str):
    try:
        if kind == "bool":
            low = text.lower()
            if low not in _TRUE | _FALSE:
                raise ValueError
            return low in _TRUE
        if kind == "int":
            return int(text)
        if kind == "float":
            return float(text)
        return tuple(h.strip() for h in text.split(";") if h.strip())
    except ValueError:
        wanted = {"bool": "true or false", "int": "an integer", "float": "a number",
                  "list": "names separated by ';'"}[kind]
        raise InputError(located(f"{text!r} is not {wanted}", path, row, column)) from None


def read_manifest(path: "str | Path") -> list[SurveyTarget]:
    """The targets a manifest file lists.

    Parameters
    ----------
    path : str or Path
        CSV or ECSV with columns ``target``, ``table``, ``system`` and,
        optionally, any of :data:`OPTION_COLUMNS` (``hypotheses`` as names
        separated by ``;``).

    Returns
    -------
    list of SurveyTarget

    Raises
    ------
    InputError
        Naming the file, row and column of a missing column, a duplicate
        target, an unusable name, a missing file or an unreadable option.
    """
    path = Path(path)
    raw = read_raw_table(path)
    for column in ("target", "table", "system"):
        if column not in raw.columns:
            raise InputError(located(f"the manifest needs a column '{column}' (columns: target, table, "
                                     f"system, then any of {', '.join(OPTION_COLUMNS)})", path))
    unknown = sorted(set(raw.columns) - {"target", "table", "system"} - set(OPTION_COLUMNS))
    if unknown:
        raise InputError(located(f"unknown column(s) {', '.join(unknown)}; options are "
                                 f"{', '.join(OPTION_COLUMNS)}", path))
    targets, seen = [], {}
    for i, row in enumerate(raw.rows):
        cell = {k: ("" if v[i] is None else str(v[i]).strip()) for k, v in raw.columns.items()}
        name = check_target_name(cell["target"], path, row)
        if name.lower() in seen:
            raise InputError(located(f"target {name!r} is listed twice (also row {seen[name.lower()]})",
                                     path, row, "target"))
        seen[name.lower()] = row
        files = {}
        for column in ("table", "system"):
            if not cell[column]:
                raise InputError(located("is empty", path, row, column))
            file = (path.parent / cell[column]) if not Path(cell[column]).is_absolute() else Path(cell[column])
            if not file.is_file():
                raise InputError(located(f"{file} does not exist", path, row, column))
            files[column] = file
        options = {k: _option(kind, cell[k], path, row, k) for k, kind in OPTION_COLUMNS.items()
                   if cell.get(k)}
        targets.append(SurveyTarget(name, files["table"], files["system"], options))
    return targets


def targets_from_folder(folder: "str | Path") -> list[SurveyTarget]:
    """The targets of a folder: every ``NAME.ecsv`` or ``NAME.csv`` beside a ``NAME.toml``, sorted by name.

    A table without a system file, or a system file without a table, is
    left out with a warning.
    """
    folder = Path(folder)
    systems = {p.stem: p for p in folder.glob("*.toml")}
    tables = {}
    for p in sorted(folder.glob("*.ecsv")) + sorted(folder.glob("*.csv")):
        if p.stem in tables:
            raise InputError(located(f"target {p.stem!r} has two tables ({tables[p.stem].name} and {p.name})",
                                     folder))
        tables[p.stem] = p
    unpaired = sorted(set(systems) ^ set(tables))
    if unpaired:
        warnings.warn(located(f"left out (a table or a system file without its pair NAME.ecsv/NAME.toml): "
                              f"{', '.join(unpaired)}", folder), TtvkitWarning, stacklevel=2)
    names = sorted(set(systems) & set(tables))
    if not names:
        raise InputError(located("holds no target (NAME.ecsv or NAME.csv beside NAME.toml)", folder))
    return [SurveyTarget(check_target_name(n, folder), tables[n], systems[n]) for n in names]


def load_targets(source) -> list[SurveyTarget]:
    """Targets from a manifest file, a folder, or a list of :class:`SurveyTarget` (checked for duplicates)."""
    if isinstance(source, (str, Path)):
        source = Path(source)
        if source.is_dir():
            return targets_from_folder(source)
        if not source.is_file():
            raise InputError(f"{source}: no such manifest file or folder")
        return read_manifest(source)
    targets = list(source)
    names = [t.name.lower() for t in targets if isinstance(t, SurveyTarget)]
    if len(names) != len(targets):
        raise InputError("a survey takes a manifest path, a folder or a list of SurveyTarget")
    if len(set(names)) != len(names):
        raise InputError(f"target names repeat: {sorted({n for n in names if names.count(n) > 1})}")
    return targets
