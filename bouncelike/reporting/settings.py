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
    compare = []                    # other run folders (discrete settings) to compare with
    seed = 0
"""

from __future__ import annotations

from typing import Any

from ..config import Table
from ..errors import InputError

REPORT_KEYS = ("exclusion_map", "grid", "refine", "prior_draws", "rescore_samples",
               "band_samples", "evidence_draws", "compare", "seed")


def report_settings(config: dict[str, Any], sampled: tuple[str, ...]) -> dict[str, Any]:
    """The validated ``[report]`` settings for a run sampling ``sampled``."""
    t = Table(config.get("report", {}), "report", REPORT_KEYS)
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
        "compare": t.strings("compare", []),
        "seed": t.integer("seed", 0, minimum=0),
    }
