"""The ``[report]`` section of a run configuration, validated (no heavy imports: the sampling
set-up checks it before a run starts, so that a bad section fails before hours of sampling).

``[report]`` (all optional)::

    [report]
    exclusion_map = ["n_s", "r"]   # two sampled parameters for the exclusion map
    grid = 36                       # coarse grid points per axis of the map
    refine = 2                      # halvings of the grid step near the boundaries
    prior_draws = 1000              # prior draws for the allowed prior fraction
    rescore_samples = 200           # thinned posterior samples rescored per constraint set
    band_samples = 200              # posterior samples for the spectra bands
    evidence_draws = 4000           # importance-sampling draws for ln Z
    compare_runs = []               # other run folders (discrete settings) to compare with
    seed = 0
"""

from __future__ import annotations

from typing import Any

from ..config import Table
from ..errors import InputError

REPORT_KEYS = ("exclusion_map", "grid", "refine", "prior_draws", "rescore_samples",
               "band_samples", "evidence_draws", "compare_runs", "seed")
RENAMED_KEYS = {"compare": "compare_runs"}  # earlier name -> name (accepted in stored runs)


def report_settings(config: dict[str, Any], sampled: tuple[str, ...],
                    stored: bool = False) -> dict[str, Any]:
    """The validated ``[report]`` settings for a run sampling ``sampled``. ``stored``: the
    configuration a finished run keeps in its manifest, where the earlier key names
    (:data:`RENAMED_KEYS`) are still read; in a configuration being run they get a one-line
    pointer to the new name."""
    raw = config.get("report", {})
    if isinstance(raw, dict):
        raw = dict(raw)
        for old, new in RENAMED_KEYS.items():
            if old in raw:
                if not stored:
                    raise InputError(f"'report.{old}' is now 'report.{new}' (renamed so that it "
                                     f"is not mistaken for the '{old}' command); rename the key")
                raw.setdefault(new, raw.pop(old))
    t = Table(raw, "report", REPORT_KEYS)
    emap = t.strings("exclusion_map", list(sampled[:2]))
    if len(emap) != 2 or len(set(emap)) != 2 or not all(n in sampled for n in emap):
        raise InputError(f"'report.exclusion_map' = {emap} must name two different sampled "
                         f"parameters; allowed: {', '.join(sampled)}")
    return {
        "exclusion_map": emap,
        "grid": t.integer("grid", 36, minimum=4, maximum=400),
        "refine": t.integer("refine", 2, minimum=0, maximum=4),
        "prior_draws": t.integer("prior_draws", 1000, minimum=10),
        "rescore_samples": t.integer("rescore_samples", 200, minimum=1),
        "band_samples": t.integer("band_samples", 200, minimum=10),
        "evidence_draws": t.integer("evidence_draws", 4000, minimum=100),
        "compare_runs": t.strings("compare_runs", []),
        "seed": t.integer("seed", 0, minimum=0),
    }
