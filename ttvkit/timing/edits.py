"""What a user changes about a compiled table before fitting: sources re-read or left out.

One place applies these edits for the library, the pipeline and every
command, and records each one as a note for the output's metadata.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from ttvkit.errors import InputError

__all__ = ["TableEdits", "parse_relabel", "parse_rows"]


def parse_relabel(item: str) -> tuple[str, str]:
    """``"SOURCE=STANDARD"`` as (source, standard)."""
    if "=" not in item:
        raise InputError(f"--relabel {item!r} must be SOURCE=STANDARD")
    source, standard = (x.strip() for x in item.rsplit("=", 1))
    return source, standard


def parse_rows(text: str) -> tuple:
    """``"12,40"`` (or ``"12-14,40"``) as a tuple of row numbers."""
    rows = []
    for part in str(text).split(","):
        part = part.strip()
        if not part:
            continue
        try:
            if "-" in part:
                a, b = (int(x) for x in part.split("-", 1))
                rows.extend(range(a, b + 1))
            else:
                rows.append(int(part))
        except ValueError:
            raise InputError(f"--drop-rows {text!r} must be row numbers such as 12,40 or 12-14") from None
    if any(r < 1 for r in rows):
        raise InputError(f"--drop-rows {text!r}: rows are numbered from 1")
    return tuple(rows)


@dataclass(frozen=True, kw_only=True)
class TableEdits:
    """Sources to re-read in another time standard and sources to leave out.

    Attributes
    ----------
    relabel : dict
        source → standard its times are really in (e.g. ``{"Old survey": "BJD_UTC"}``).
    exclude_sources : tuple of str
        Sources left out.
    drop_rows : tuple of int
        Data rows of the file (1-based, as errors name them) left out; they
        are taken out when the file is read (``TimingTable.read(drop_rows=...)``)
        since a row that cannot be placed stops the reading, and noted here.
    """

    relabel: dict = field(default_factory=dict)
    exclude_sources: tuple = ()
    drop_rows: tuple = ()

    def apply(self, table) -> tuple:
        """The edited table and one note per edit: ``(table, notes)``; the input is unchanged."""
        notes = []
        if self.drop_rows:
            notes.append(f"row(s) {', '.join(map(str, sorted(self.drop_rows)))} of the file were left "
                         "out at the user's request")
        for source, standard in self.relabel.items():
            table = table.relabel_source(source, standard)
            notes.append(f"source {source!r} was re-read as {standard} at the user's request")
        for source in self.exclude_sources:
            if source not in table.sources:
                raise InputError(f"--exclude-source {source!r}: no such source; sources: "
                                 f"{', '.join(table.sources)}")
            table = table.subset(table.source != source)
            notes.append(f"source {source!r} was left out at the user's request")
        return table, notes

    def to_dict(self) -> dict:
        """The edits, for an output's metadata."""
        return {"relabel": dict(self.relabel), "exclude_sources": list(self.exclude_sources),
                "drop_rows": sorted(self.drop_rows)}
