"""What a user changes about a compiled table before fitting: sources re-read or left out.

One place applies these edits for the library, the pipeline and every
command, and records each one as a note for the output's metadata.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from ttvkit.errors import InputError

__all__ = ["TableEdits", "parse_relabel"]


def parse_relabel(item: str) -> tuple[str, str]:
    """``"SOURCE=STANDARD"`` as (source, standard)."""
    if "=" not in item:
        raise InputError(f"--relabel {item!r} must be SOURCE=STANDARD")
    source, standard = (x.strip() for x in item.rsplit("=", 1))
    return source, standard


@dataclass(frozen=True, kw_only=True)
class TableEdits:
    """Sources to re-read in another time standard and sources to leave out.

    Attributes
    ----------
    relabel : dict
        source → standard its times are really in (e.g. ``{"Old survey": "BJD_UTC"}``).
    exclude_sources : tuple of str
        Sources left out.
    """

    relabel: dict = field(default_factory=dict)
    exclude_sources: tuple = ()

    def apply(self, table) -> tuple:
        """The edited table and one note per edit: ``(table, notes)``; the input is unchanged."""
        notes = []
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
