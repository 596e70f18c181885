"""Raw table reading: CSV and ECSV files into named columns with row numbers.

This module only reads and checks the *shape* of a file (is it text, has it a
header, do the rows have the right number of fields, can a unit be parsed).
It hands on strings or numbers with their row numbers so that the validation
in :mod:`ttvkit.timing.table` can name the file, the row and the column of any bad
value.
"""

from __future__ import annotations

import csv
import io
import os
import re
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

import astropy.units as u
import numpy as np

from ttvkit.errors import InputError, OutputExistsError, located

__all__ = ["RawTable", "read_raw_table", "atomic_write_text", "check_output_path"]

_HEADER_UNIT = re.compile(r"^\s*(?P<name>[^\[\(]+?)\s*[\[\(](?P<unit>[^\]\)]*)[\]\)]\s*$")


@dataclass
class RawTable:
    """Columns of a file before validation.

    Attributes
    ----------
    path : str
        The file, for error messages.
    columns : dict
        Column name (lower case) → list of values (str for CSV; numbers,
        str or None for ECSV).
    units : dict
        Column name → astropy unit given in the file (header ``name [unit]``
        for CSV, the column unit for ECSV).
    rows : list of int
        The row number (1-based, data rows only) of each entry.
    meta : dict
        ECSV metadata, empty for CSV.
    """

    path: str
    columns: dict
    units: dict
    rows: list
    meta: dict = field(default_factory=dict)
    lines: list = field(default_factory=list)

    def where(self, index: int) -> int:
        """Row number of entry ``index`` (1-based, data rows)."""
        return self.rows[index]


def _read_text(path: Path) -> str:
    try:
        data = path.read_bytes()
    except FileNotFoundError:
        raise InputError(f"{path}: no such file") from None
    except IsADirectoryError:
        raise InputError(f"{path}: is a directory, not a table") from None
    except OSError as exc:
        raise InputError(f"{path}: cannot be read ({exc.strerror})") from None
    if b"\x00" in data[:65536]:
        raise InputError(f"{path}: looks like a binary file, not a CSV or ECSV text table")
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise InputError(f"{path}: is not UTF-8 text (binary file?); expected a "
                         "CSV or ECSV table") from None
    if not text.strip():
        raise InputError(f"{path}: the file is empty")
    return text


def _parse_unit(text: str, path, column: str) -> u.UnitBase:
    try:
        return u.Unit(text.strip())
    except (ValueError, TypeError):
        raise InputError(located(f"unparseable unit {text!r}; use an astropy unit "
                                 "such as d, s, min", path, None, column)) from None


def read_raw_table(path: "str | os.PathLike") -> RawTable:
    """Read a CSV or ECSV file into a :class:`RawTable`.

    ECSV is recognised by its ``# %ECSV`` first line, whatever the suffix.
    CSV header names may carry a unit in brackets, ``uncertainty [s]``.
    Lines starting with ``#`` and blank lines are skipped.
    """
    path = Path(path)
    text = _read_text(path)
    if text.lstrip().startswith("# %ECSV"):
        return _read_ecsv(path, text)
    return _read_csv(path, text)


def _read_csv(path: Path, text: str) -> RawTable:
    lines = [(i + 1, line) for i, line in enumerate(text.splitlines())
             if line.strip() and not line.lstrip().startswith("#")]
    if not lines:
        raise InputError(f"{path}: holds only comments, no header or data")
    try:
        sample = "\n".join(line for _, line in lines[:5])
        delimiter = csv.Sniffer().sniff(sample, delimiters=",;\t").delimiter
    except csv.Error:
        delimiter = ","
    try:
        parsed = list(csv.reader(io.StringIO("\n".join(line for _, line in lines)),
                                 delimiter=delimiter))
    except csv.Error as exc:
        raise InputError(f"{path}: not a readable CSV table ({exc})") from None
    header = [h.strip() for h in parsed[0]]
    names, units = [], {}
    for h in header:
        m = _HEADER_UNIT.match(h)
        name = (m["name"] if m else h).strip().lower()
        if not name:
            raise InputError(f"{path}: line {lines[0][0]}: the header has an empty column name")
        if m:
            units[name] = _parse_unit(m["unit"], path, name)
        names.append(name)
    if len(set(names)) != len(names):
        dup = sorted({n for n in names if names.count(n) > 1})
        raise InputError(f"{path}: header names column(s) {', '.join(dup)} twice")
    body = parsed[1:]
    if not body:
        raise InputError(f"{path}: has a header but no data rows")
    columns = {n: [] for n in names}
    rows = []
    for k, fields in enumerate(body):
        line_no = lines[k + 1][0]
        if len(fields) != len(names):
            raise InputError(f"{path}: row {k + 1} (line {line_no}) has {len(fields)} "
                             f"fields, the header has {len(names)}")
        for n, value in zip(names, fields):
            columns[n].append(value.strip())
        rows.append(k + 1)
    return RawTable(str(path), columns, units, rows, {}, [ln for ln, _ in lines[1:]])


def _read_ecsv(path: Path, text: str) -> RawTable:
    from astropy.table import Table

    try:
        table = Table.read(text, format="ascii.ecsv")
    except Exception as exc:  # astropy raises many types for malformed ECSV
        raise InputError(f"{path}: not a readable ECSV table ({type(exc).__name__}: "
                         f"{str(exc).splitlines()[0] if str(exc) else 'no detail'})") from None
    if len(table) == 0:
        raise InputError(f"{path}: has a header but no data rows")
    columns, units = {}, {}
    for name in table.colnames:
        col = table[name]
        key = name.strip().lower()
        mask = np.ma.getmaskarray(col) if hasattr(col, "mask") else np.zeros(len(col), bool)
        values = [None if m else (v.item() if hasattr(v, "item") else v)
                  for v, m in zip(np.asarray(col), mask)]
        columns[key] = values
        if col.unit is not None:
            units[key] = col.unit
    meta = dict(table.meta)
    return RawTable(str(path), columns, units, list(range(1, len(table) + 1)), meta)


def check_output_path(path: "str | os.PathLike", overwrite: bool) -> Path:
    """Refuse to replace an existing file unless ``overwrite``."""
    path = Path(path)
    if path.exists() and not overwrite:
        raise OutputExistsError(f"{path}: exists; pass overwrite=True (--force on "
                                "the command line) to replace it")
    if path.is_dir():
        raise OutputExistsError(f"{path}: is a directory")
    if not path.parent.exists():
        raise InputError(f"{path}: the folder {path.parent} does not exist")
    if not path.parent.is_dir():
        raise InputError(f"{path}: {path.parent} is a file, not a folder")
    return path


def atomic_write_text(path: "str | os.PathLike", text: str, overwrite: bool = False) -> Path:
    """Write ``text`` to ``path`` through a temporary file and a rename.

    An interrupted write leaves either the old file or none, never half a file.
    """
    path = check_output_path(path, overwrite)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as handle:
            handle.write(text)
        mask = os.umask(0o022)
        os.umask(mask)
        os.chmod(tmp, 0o666 & ~mask)  # mkstemp's 0600 would hide the file from collaborators
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return path
