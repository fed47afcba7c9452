"""The look of every report figure (our palette and layout) and how figures are saved.

Each figure is saved as PDF and PNG (atomically, cropped to its content) beside a
``.caption.txt`` naming the constraint sets with their citations and stating the interval
definitions and rules the figure uses, and, where a figure draws computed numbers, a
``.json`` file with them (the data a test or a referee can check against the picture).
"""

from __future__ import annotations

import contextlib
from collections.abc import Iterator, Sequence
from pathlib import Path
from typing import Any

from ..io import json_safe, save_figure_atomic, write_json_atomic, write_text_atomic

INK = "#1d2b36"
MUTED = "#6b7785"
POSTERIOR = ("#1f5f8b", "#9cc3de")  # 68% (dark), 95% (light)
BEST_FIT = "#c4472d"
PUBLISHED = ("#a8700b", "#efd6a1")  # 68%, 95% regions of the published constraints
EXCLUDED = ("#f3cdc7", "#df8d81")  # excluded at 95%, at 99.7%
NOT_EVALUABLE = "#cfd3d8"
WINDOW = "#eef0f2"
SERIES = ("#1f5f8b", "#c4472d", "#3b8b5a", "#7a4e9c", "#a8700b", "#2f8f9d", "#8c5a3c",
          "#5b6b7a", "#b5487a", "#4f6d1f")

RC = {
    "font.size": 8.5, "axes.labelsize": 9, "axes.titlesize": 9, "legend.fontsize": 7.5,
    "xtick.labelsize": 7.5, "ytick.labelsize": 7.5, "axes.edgecolor": INK,
    "axes.labelcolor": INK, "text.color": INK, "xtick.color": INK, "ytick.color": INK,
    "axes.spines.top": False, "axes.spines.right": False, "legend.frameon": False,
    "axes.linewidth": 0.7, "xtick.major.width": 0.6, "ytick.major.width": 0.6,
    "xtick.direction": "out", "ytick.direction": "out", "lines.linewidth": 1.3,
    "savefig.bbox": "tight", "savefig.pad_inches": 0.04, "mathtext.fontset": "dejavusans",
    "axes.formatter.useoffset": False,
}


def plt() -> Any:
    """matplotlib.pyplot on the non-interactive backend (imported on first use)."""
    import matplotlib

    matplotlib.use("Agg", force=False)
    import matplotlib.pyplot as pyplot

    return pyplot


@contextlib.contextmanager
def styled() -> Iterator[Any]:
    """pyplot with the report style active."""
    pyplot = plt()
    with pyplot.rc_context(RC):
        yield pyplot


def citations_text(sets: Sequence[dict[str, Any]]) -> str:
    lines = ["Constraint sets:"]
    for s in sets:
        tag = " [FORECAST, not a measurement]" if s.get("forecast") else ""
        lines.append(f"- {s.get('label') or s['name']} ({s['name']}){tag}: {s['title']}. "
                     f"{s['citation']} (arXiv:{s['arxiv']}); {s.get('table', '')}")
        if s.get("upper_limit_treatment"):
            lines.append(f"  Upper limit treatment: {s['upper_limit_treatment']}")
    return "\n".join(lines)


def save_with_caption(fig: Any, stem: Path, caption: str,
                      data: dict[str, Any] | None = None) -> list[Path]:
    """PDF, PNG, caption (and the drawn numbers as JSON) of one figure."""
    import warnings

    with warnings.catch_warnings(), plt().rc_context(RC):
        warnings.simplefilter("ignore", DeprecationWarning)  # getdist's tick formatter
        paths = [save_figure_atomic(fig, stem.with_suffix(".pdf")),
                 save_figure_atomic(fig, stem.with_suffix(".png"), dpi=150)]
    paths.append(write_text_atomic(stem.with_suffix(".caption.txt"), caption.strip() + "\n"))
    if data is not None:
        paths.append(write_json_atomic(stem.with_suffix(".json"), json_safe(data)))
    plt().close(fig)
    return paths
