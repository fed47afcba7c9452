"""The bounce families come in the declared perturbation variants; a variant travels to a
worker process by name and arrives without caches."""

from __future__ import annotations

import pickle

from bouncelike.models.registry import MODELS
from bouncelike.models.variants import PERTURBATION_VARIANTS


def test_every_family_has_every_variant_under_its_documented_name():
    for pattern in ("bounce_{}", "bounce_physical_{}", "bounce_physical_{}_starobinsky"):
        for v in PERTURBATION_VARIANTS:
            cls = MODELS[pattern.format(v.suffix)]
            assert (cls.prescription, cls.state) == (v.prescription, v.state)
            assert cls.title.endswith(v.words)


def test_a_pickled_variant_is_a_fresh_instance_of_the_same_model():
    model = MODELS["bounce_physical_dressed_metric_non_oscillating"]()
    model._last = ("a cached evaluation", {})  # caches are never shipped to workers
    copy = pickle.loads(pickle.dumps(model))
    assert type(copy) is type(model) and copy._last is None and copy._fast_model is None
    transfer = pickle.loads(pickle.dumps(MODELS["bounce_deformed_algebra"]()))
    assert transfer.prescription == "deformed_algebra" and transfer._model is None
