"""Where a set of published numbers comes from: the citation every set file carries.

Constraint sets (:mod:`.sets`) and low-ell tables (:mod:`.lowell_data`) start with the same
fields: the set's name in this package, a title, the paper's citation and arXiv number, the
table the numbers are read from and the data combination they belong to.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..config import Table

#: the citation fields every set file starts with (after ``name``)
CITATION_KEYS = ("title", "citation", "arxiv", "table", "data_combination")


@dataclass(frozen=True, eq=False)
class CitedSource:
    """Where a set of published numbers comes from: its name in this package and its
    citation (paper, arXiv number, table, data combination)."""

    name: str
    title: str
    citation: str
    arxiv: str
    table: str
    data_combination: str

    @property
    def source(self) -> str:
        """Short source text used in score tables."""
        return f"{self.name} (arXiv:{self.arxiv})"

    def citation_dict(self) -> dict[str, str]:
        return {"name": self.name, **{key: getattr(self, key) for key in CITATION_KEYS}}


def citation_fields(top: Table) -> dict[str, str]:
    """The citation fields of a set file's top table (each a required, non-empty string)."""
    return {key: top.text(key) for key in CITATION_KEYS}
