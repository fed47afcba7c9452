"""Hostile input, systematically: every key a user can write gets every kind of bad value
that applies to it, and every data file, prior file, option and run folder the commands read
gets the damage it can come with. Each case runs the real command line in-process and must
end with exactly one line ``bouncelike: error: ...`` naming the key (or file, or option) the
user wrote, exit code 2, and nothing written.

The configuration keys come from the declarations the package itself reads
(:class:`bouncelike.config.Parameter` of each forward model, of the reheating history, of the
bounce options) plus the keys that the command sections read with bounds of their own
(``[efolds]``, ``[compare]``, ``[sampling]``, ``[report]``, ``[likelihood]``,
``[background.integration]`` ...), listed below with their ranges as the code states them.
For each key, the kinds that apply: a string, a list, a table or a boolean where a number is
wanted, NaN, +inf, -inf, a value just outside each end of the allowed range, a misspelt key,
and for a choice an unknown choice. A key already reached from another section is counted
once (``reheating.N_star`` is one key whichever model reads it).

INVENTORY of the bad input the suite refuses (one line naming the key, file or option; exit
code 2, or 1 for a point the model cannot evaluate; nothing written). One kind = one test case;
parametrized cases count individually. Counted at the time of writing; recount when cases are
added (the per-file counts of the other files: their test cases that assert a refusal).

    this file                                                           1333
      configuration keys x kinds of bad value (120 keys)                1083
        [background] + .bounce/.contracting/.classical/.integration
          /.bianchi_i/.condensate/.asymmetric  221   [perturbations]  123
        [sampling] 119   [efolds] 112   [compare] 85   [power_law] 80
        [report] 80   [potential] 63   [bounce_transfer] 50
        [bounce_physical] 40   [reheating] 40   [slow_roll] 40   [likelihood] 30
      configuration structure (sections, models, named files, choices)    25
      structured values ([compare] cases, low_ell_range)                    16
      points refused on evaluation (4 not evaluable, 2 bad values)           6
      user constraint-set files                                             50
      user low-ell set files                                                26
      spectra table CSV files                                               24
      prior files (incl. the e-fold phase prior table)                      48
      command-line arguments                                                33
      damaged run folders (report 16, sample --resume 6)                    22
    other files                                                           252
      test_bad_input 31, test_sampling_cli 31, test_cli_contract 23,
      test_score_cli 22, test_background_setup 15, test_lowell_score 15,
      test_run_folders 14, test_config_is_data 13, test_constraint_sets 13,
      test_background_potentials 11, test_efolds_command 11,
      test_lowell_likelihood 11, test_spectra 10, test_background_reliability 6,
      test_sampling_bounce_physical 3, 2 each: test_background_efolds,
      test_bounce_physical_starobinsky, test_likelihood, test_lowell_runs,
      test_perturbation_forward; 1 each: test_asymmetric_and_condensate,
      test_background_isotropic, test_bianchi_dynamics, test_compare_command,
      test_installed_package, test_perturbation_modes, test_perturbation_transfer,
      test_perturbation_transfer_families, test_perturbation_window_states,
      test_sampling_driver, test_sampling_models, test_sky_projection, test_summary
    total                                                                 1585
    of which the same kind tested twice (this file and another), at most    95
    distinct kinds, at least                                             1490   (target 187)
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, replace

import pytest
from cli_helpers import listing, one_line_error
from config_texts import FIXED_HIGHER_ORDER, SMALL_REPORT, USER_SET_CITATION

from bouncelike.cli import main
from bouncelike.config import Parameter, tomllib
from bouncelike.models.bounce import PERTURBATION_OPTIONS
from bouncelike.models.registry import MODELS
from bouncelike.parallel import MAX_WORKERS
from bouncelike.quantities import (
    AMPLITUDE,
    BARBERO_IMMIRZI,
    CRITICAL_DENSITY,
    PIVOT_SCALE,
    POTENTIAL_FRACTION,
    QUADRATIC_MASS,
    REHEATING,
    START_DENSITY,
    START_DENSITY_DECADES,
    TENSOR_TILT,
)
from bouncelike.sampling.setup import MAX_STEPS, MAX_WALKERS

# -- writing a configuration -----------------------------------------------------------------


def toml_value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, str):
        return json.dumps(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, int):
        return str(v)
    if isinstance(v, list):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{k} = {toml_value(x)}" for k, x in v.items()) + " }"
    raise TypeError(v)


def toml_text(data: dict, prefix: str = "") -> str:
    """``data`` as TOML: scalars (and inline values) first, then each sub-table."""
    lines, subs = [], []
    for k, v in data.items():
        (subs if isinstance(v, dict) else lines).append((k, v))
    out = [f"[{prefix}]"] if prefix and lines else []
    out += [f"{k} = {toml_value(v)}" for k, v in lines]
    for k, v in subs:
        out.append(toml_text(v, f"{prefix}.{k}" if prefix else k))
    return "\n".join(out) + "\n"


def edited(base: str, path: str, value=None, drop: tuple[str, ...] = (),
           rename: str | None = None) -> str:
    """``base`` (TOML text) with the dotted key ``path`` set to ``value`` (or renamed to
    ``rename``), after dropping the dotted keys ``drop``."""
    data = tomllib.loads(base)

    def parent(p):
        *head, last = p.split(".")
        node = data
        for part in head:
            node = node.setdefault(part, {})
        return node, last

    for p in drop:
        node, last = parent(p)
        node.pop(last, None)
    node, last = parent(path)
    if rename is not None:
        node[rename] = node.pop(last) if last in node else 1.0
    else:
        node[last] = value
    return toml_text(data)


# -- base configurations (valid; small; each case breaks one key) ----------------------------

POWER_LAW = """
[model]
spectra = "power_law"
[power_law]
ln_1e10_As = 3.044
n_s = 0.9649
running = 0.0
running_of_running = 0.0
r = 0.01
n_t = "consistency"
pivot = 0.05
[likelihood]
sets = ["planck2018_base", "bk18"]
allow_overlap = false
"""

SLOW_ROLL_MASS = """
[model]
spectra = "slow_roll_quadratic"
[slow_roll]
N_star = 60
mass = 1.16e-6
pivot = 0.05
"""

SLOW_ROLL_AMPLITUDE = SLOW_ROLL_MASS.replace("mass = 1.16e-6", "ln_1e10_As = 3.044")
STAROBINSKY_MASS = SLOW_ROLL_MASS.replace("slow_roll_quadratic", "slow_roll_starobinsky")

BOUNCE_TRANSFER = """
[model]
spectra = "bounce_dressed_metric"
[bounce_transfer]
ln_1e10_As = 3.044
n_s = 0.965
r = 0.01
log10_k_lqc = -4.0
critical_density = 0.40937
"""

PHYSICAL = """
[model]
spectra = "bounce_physical_dressed_metric"
[bounce_physical]
log10_potential_fraction = -11.6
mass = 1.2e-6
critical_density = 0.40937
[reheating]
N_star = 55.0
"""

PHYSICAL_HISTORY = PHYSICAL.replace(
    "N_star = 55.0", "equation_of_state = 0.0\nlog10_reheating_density = -20.0\n"
    "thermal_degrees_of_freedom = 106.75")

PHYSICAL_STAROBINSKY = PHYSICAL.replace("bounce_physical_dressed_metric",
                                        "bounce_physical_dressed_metric_starobinsky")

BOUNCE = """
[model]
spectra = "bounce"
[potential]
name = "quadratic"
mass = 1.2e-6
[background]
dynamics = "isotropic"
gamma = 0.2375
start = "bounce"
[background.bounce]
potential_fraction = 1.76e-12
phidot_sign = 1
field_sign = 0
[background.integration]
rtol = 1e-10
atol = 1e-13
max_inflation_efolds = 1e4
max_time = 1e12
dense_points = 1000
max_steps = 1000000
max_seconds = 600.0
[perturbations]
prescription = "dressed_metric"
state = "remote_past"
k_count = 160
[reheating]
N_star = 55.0
"""

TABLE = """
[model]
spectra = "table"
[table]
file = "spectra.csv"
"""

EFOLDS = """
[potential]
name = "quadratic"
mass = 1.21e-6
[background]
gamma = 0.2375
[efolds]
n_samples = 4
seed = 1
threshold = 60.0
prior = "phase"
start_density = 1e-16
start_density_decades = 2.0
workers = 1
bins = 10
convergence_samples = 0
"""

EFOLDS_FRACTION = """
[potential]
name = "quadratic"
mass = 1.21e-6
[efolds]
n_samples = 4
prior = "bounce_fraction"
fraction_min = 1e-13
fraction_max = 1e-9
fraction_scale = "log"
convergence_samples = 0
"""

COMPARE = """
[potential]
name = "quadratic"
mass = 1.21e-6
[background]
gamma = 0.2375
[compare]
n_samples = 3
seed = 0
threshold = 60.0
bins = 10
workers = 1
start_density = 1e-16
start_density_decades = 2.0
cases = [{ label = "LQC", dynamics = "isotropic" }]
shear_ratios = [1e-5]
shear_direction = 0.0
"""

def _efolds_with(background: str = "", potential: str = "") -> str:
    """EFOLDS with other [background] lines (dynamics and its table) or another potential."""
    text = EFOLDS.replace("gamma = 0.2375\n", "gamma = 0.2375\n" + background)
    if potential:
        text = text.replace('name = "quadratic"\nmass = 1.21e-6\n', potential)
    return text


EFOLDS_BIANCHI = _efolds_with('dynamics = "bianchi_i"\n[background.bianchi_i]\n'
                              "shear_ratio = 1e-5\ndirection = 0.0\nreference_density = 1e-16\n")
EFOLDS_CONDENSATE = _efolds_with('dynamics = "condensate"\n[background.condensate]\n'
                                 "rescale = 0.5\ncondensate_term = 0.0\n")
EFOLDS_ASYMMETRIC = _efolds_with('dynamics = "asymmetric"\n[background.asymmetric]\n'
                                 "gamma = 0.2375\n")
EFOLDS_STAROBINSKY = _efolds_with(potential='name = "starobinsky"\nmass = 1.3e-5\n')
EFOLDS_MONOMIAL = _efolds_with(potential='name = "monomial"\namplitude = 1e-12\n'
                               "power = 2.0\n")
EFOLDS_LINEAR = _efolds_with(potential='name = "linear"\nslope = 1e-11\nsmoothing = 1e-3\n')

BOUNCE_CONTRACTING = BOUNCE.replace('start = "bounce"', 'start = "contracting"').replace(
    "[background.bounce]\npotential_fraction = 1.76e-12\nphidot_sign = 1\nfield_sign = 0",
    "[background.contracting]\nstart_density = 1e-16\nphase = 0.5")
BOUNCE_CLASSICAL = BOUNCE.replace('start = "bounce"', 'start = "classical"').replace(
    "[background.bounce]\npotential_fraction = 1.76e-12\nphidot_sign = 1\nfield_sign = 0",
    "[background.classical]\nphi = 3.0\nphidot = 0.0")

SAMPLE = """
[likelihood]
sets = ["planck2018_base", "bk18"]
[sampling]
prior = "power_law"
walkers = 24
max_steps = 60
min_steps = 10
tau_multiple = 50.0
tau_tolerance = 0.05
checkpoint_every = 20
seed = 1
prior_survey_draws = 10
run_name = "run"
chains_dir = "chains"
workers = 1
progress = false
require_summary_fit = true
model = "power_law"
[report]
exclusion_map = ["n_s", "r"]
grid = 36
refine = 2
prior_draws = 1000
rescore_samples = 200
band_samples = 200
evidence_draws = 4000
compare_runs = []
seed = 0
"""

# the command line of each base (the config file name is appended after the command)
SCORE, EFOLDS_CMD, COMPARE_CMD, SAMPLE_CMD = "score", "efolds", "compare", "sample"


# -- the keys ----------------------------------------------------------------------------------


@dataclass(frozen=True)
class Key:
    """One key a user can write: where (dotted), its kind and allowed range or choices, the
    base configuration and command that read it, and keys to drop from the base first."""

    path: str
    kind: str  # number, integer, string, boolean, strings, numbers
    base: str
    command: str
    lower: float | None = None
    upper: float | None = None
    lower_open: bool = False
    upper_open: bool = False
    choices: tuple[str, ...] = ()
    drop: tuple[str, ...] = ()
    typo: bool = True  # the table rejects unknown keys (False: free-form tables)
    name: str = ""  # the test id when one key has two declarations (default: path)

    @property
    def id(self) -> str:
        return self.name or self.path


def declared(section: str, p: Parameter, base: str, command: str = SCORE, **kw) -> Key:
    return Key(f"{section}.{p.name}", p.kind, base, command, p.lower, p.upper, p.lower_open,
               p.upper_open, p.choices, **kw)


def model_keys(name: str, base: str, **kw) -> list[Key]:
    model = MODELS[name]()
    return [declared(model.config_section, p, base, **kw) for p in model.parameters
            if p.name not in {q.name for q in REHEATING}]


def integration_keys() -> list[Key]:
    # bouncelike/background/setup.py settings_from_config
    k = "background.integration."
    return [Key(k + "rtol", "number", BOUNCE, SCORE, 1e-14, 1e-3),
            Key(k + "atol", "number", BOUNCE, SCORE, 1e-20, 1e-3),
            Key(k + "max_inflation_efolds", "number", BOUNCE, SCORE, 1.0, 1e7),
            Key(k + "max_time", "number", BOUNCE, SCORE, 0.0, None, lower_open=True),
            Key(k + "dense_points", "integer", BOUNCE, SCORE, 0, 10**7),
            Key(k + "max_steps", "integer", BOUNCE, SCORE, 100, 10**9),
            Key(k + "max_seconds", "number", BOUNCE, SCORE, 0.0, 1e6, lower_open=True)]


def sampling_keys() -> list[Key]:
    # bouncelike/sampling/setup.py sampler_settings and build_run
    s = "sampling."
    return [Key(s + "walkers", "integer", SAMPLE, SAMPLE_CMD, 2, MAX_WALKERS),
            Key(s + "max_steps", "integer", SAMPLE, SAMPLE_CMD, 1, MAX_STEPS),
            Key(s + "checkpoint_every", "integer", SAMPLE, SAMPLE_CMD, 1, MAX_STEPS),
            Key(s + "min_steps", "integer", SAMPLE, SAMPLE_CMD, 0, MAX_STEPS),
            Key(s + "tau_multiple", "number", SAMPLE, SAMPLE_CMD, 1.0, 1000.0),
            Key(s + "tau_tolerance", "number", SAMPLE, SAMPLE_CMD, 0.0, 1.0, lower_open=True),
            Key(s + "seed", "integer", SAMPLE, SAMPLE_CMD, 0, 2**63 - 1),
            Key(s + "prior_survey_draws", "integer", SAMPLE, SAMPLE_CMD, 0, None),
            Key(s + "workers", "integer", SAMPLE, SAMPLE_CMD, 1, MAX_WORKERS),
            Key(s + "prior", "string", SAMPLE, SAMPLE_CMD),
            Key(s + "model", "string", SAMPLE, SAMPLE_CMD, choices=("power_law",)),
            Key(s + "run_name", "string", SAMPLE, SAMPLE_CMD),
            Key(s + "chains_dir", "string", SAMPLE, SAMPLE_CMD),
            Key(s + "progress", "boolean", SAMPLE, SAMPLE_CMD),
            Key(s + "require_summary_fit", "boolean", SAMPLE, SAMPLE_CMD)]


def report_keys() -> list[Key]:
    # bouncelike/reporting/settings.py report_settings (checked when a run starts)
    r = "report."
    return [Key(r + "exclusion_map", "strings", SAMPLE, SAMPLE_CMD),
            Key(r + "grid", "integer", SAMPLE, SAMPLE_CMD, 4, 400),
            Key(r + "refine", "integer", SAMPLE, SAMPLE_CMD, 0, 4),
            Key(r + "prior_draws", "integer", SAMPLE, SAMPLE_CMD, 10, None),
            Key(r + "rescore_samples", "integer", SAMPLE, SAMPLE_CMD, 1, None),
            Key(r + "band_samples", "integer", SAMPLE, SAMPLE_CMD, 10, None),
            Key(r + "evidence_draws", "integer", SAMPLE, SAMPLE_CMD, 100, None),
            Key(r + "compare_runs", "strings", SAMPLE, SAMPLE_CMD),
            Key(r + "seed", "integer", SAMPLE, SAMPLE_CMD, 0, None)]


def efolds_keys() -> list[Key]:
    # bouncelike/commands/efolds.py _options, bouncelike/background/efolds.py prior_from_config
    e = "efolds."
    return [Key(e + "n_samples", "integer", EFOLDS, EFOLDS_CMD, 1, 10**7),
            Key(e + "seed", "integer", EFOLDS, EFOLDS_CMD, 0, None),
            Key(e + "threshold", "number", EFOLDS, EFOLDS_CMD, 0.0, None),
            Key(e + "bins", "integer", EFOLDS, EFOLDS_CMD, 2, 10**4),
            Key(e + "convergence_samples", "integer", EFOLDS, EFOLDS_CMD, 0, None),
            Key(e + "workers", "integer", EFOLDS, EFOLDS_CMD, 1, MAX_WORKERS),
            Key(e + "prior", "string", EFOLDS, EFOLDS_CMD, choices=("phase", "bounce_fraction")),
            declared("efolds", START_DENSITY, EFOLDS, EFOLDS_CMD),
            declared("efolds", START_DENSITY_DECADES, EFOLDS, EFOLDS_CMD),
            declared("efolds", replace(POTENTIAL_FRACTION, name="fraction_min"),
                     EFOLDS_FRACTION, EFOLDS_CMD),
            declared("efolds", replace(POTENTIAL_FRACTION, name="fraction_max"),
                     EFOLDS_FRACTION, EFOLDS_CMD),
            Key(e + "fraction_scale", "string", EFOLDS_FRACTION, EFOLDS_CMD,
                choices=("log", "linear"))]


def compare_keys() -> list[Key]:
    # bouncelike/commands/compare.py
    c = "compare."
    return [Key(c + "n_samples", "integer", COMPARE, COMPARE_CMD, 1, 10**6),
            Key(c + "seed", "integer", COMPARE, COMPARE_CMD, 0, None),
            Key(c + "threshold", "number", COMPARE, COMPARE_CMD, 0.0, None),
            Key(c + "bins", "integer", COMPARE, COMPARE_CMD, 2, 10**4),
            Key(c + "workers", "integer", COMPARE, COMPARE_CMD, 1, MAX_WORKERS),
            Key(c + "shear_ratios", "numbers", COMPARE, COMPARE_CMD),
            Key(c + "shear_direction", "number", COMPARE, COMPARE_CMD),
            declared("compare", START_DENSITY, COMPARE, COMPARE_CMD),
            declared("compare", START_DENSITY_DECADES, COMPARE, COMPARE_CMD)]


def likelihood_keys() -> list[Key]:
    # bouncelike/likelihood/gaussian.py likelihood_from_config
    lk = "likelihood."
    return [Key(lk + "sets", "strings", POWER_LAW, SCORE),
            Key(lk + "files", "strings", POWER_LAW, SCORE),
            Key(lk + "allow_overlap", "boolean", POWER_LAW, SCORE),
            Key(lk + "fit_tolerance", "number", POWER_LAW, SCORE, 0.0, None, lower_open=True),
            Key(lk + "fit_half_width", "number", POWER_LAW, SCORE, 0.0, 10.0, lower_open=True)]


def background_keys() -> list[Key]:
    # bouncelike/background/setup.py background_from_config and initial_from_config
    return [declared("background", BARBERO_IMMIRZI, BOUNCE),
            declared("background", CRITICAL_DENSITY, BOUNCE, drop=("background.gamma",)),
            Key("background.start", "string", BOUNCE, SCORE,
                choices=("bounce", "contracting", "classical")),
            declared("background.bounce", POTENTIAL_FRACTION, BOUNCE),
            Key("background.bounce.phidot_sign", "integer", BOUNCE, SCORE, -1, 1),
            Key("background.bounce.field_sign", "integer", BOUNCE, SCORE, -1, 1),
            declared("potential", QUADRATIC_MASS, BOUNCE),
            *integration_keys()]


def dynamics_and_potential_keys() -> list[Key]:
    # declarations of background/bianchi.py, condensate.py, asymmetric.py, potentials.py and
    # quantities.py, read through 'bouncelike efolds'
    from bouncelike.background.bianchi import DIRECTION, REFERENCE_DENSITY, SHEAR_RATIO
    from bouncelike.background.condensate import CONDENSATE_TERM, RESCALE
    from bouncelike.background.potentials import AMPLITUDE as LAMBDA
    from bouncelike.background.potentials import POTENTIALS, POWER, SLOPE, SMOOTHING

    e = EFOLDS_CMD
    return [Key("background.dynamics", "string", EFOLDS, e,
                choices=("asymmetric", "bianchi_i", "condensate", "isotropic")),
            *[declared("background.bianchi_i", p, EFOLDS_BIANCHI, e)
              for p in (SHEAR_RATIO, DIRECTION, REFERENCE_DENSITY)],
            *[declared("background.condensate", p, EFOLDS_CONDENSATE, e)
              for p in (RESCALE, CONDENSATE_TERM)],
            declared("background.asymmetric", BARBERO_IMMIRZI, EFOLDS_ASYMMETRIC, e),
            Key("potential.name", "string", EFOLDS, e, choices=tuple(POTENTIALS)),
            declared("potential", STAROBINSKY_MASS_DECL, EFOLDS_STAROBINSKY, e,
                     name="potential.mass (starobinsky)"),
            declared("potential", LAMBDA, EFOLDS_MONOMIAL, e),
            declared("potential", POWER, EFOLDS_MONOMIAL, e),
            declared("potential", SLOPE, EFOLDS_LINEAR, e),
            declared("potential", SMOOTHING, EFOLDS_LINEAR, e),
            declared("background.contracting", START_DENSITY, BOUNCE_CONTRACTING),
            Key("background.contracting.phase", "number", BOUNCE_CONTRACTING, SCORE),
            Key("background.classical.phi", "number", BOUNCE_CLASSICAL, SCORE),
            Key("background.classical.phidot", "number", BOUNCE_CLASSICAL, SCORE)]


def all_keys() -> list[Key]:
    keys = [*model_keys("power_law", POWER_LAW),
            declared("power_law", TENSOR_TILT, POWER_LAW),
            declared("power_law", PIVOT_SCALE, POWER_LAW),
            declared("power_law", AMPLITUDE, POWER_LAW, drop=("power_law.ln_1e10_As",)),
            *model_keys("slow_roll_quadratic", SLOW_ROLL_AMPLITUDE),
            declared("slow_roll", QUADRATIC_MASS, SLOW_ROLL_MASS),
            declared("slow_roll", PIVOT_SCALE, SLOW_ROLL_MASS),
            *model_keys("bounce_dressed_metric", BOUNCE_TRANSFER),
            *model_keys("bounce_physical_dressed_metric", PHYSICAL),
            *[declared("reheating", p, PHYSICAL_HISTORY if p.name != "N_star" else PHYSICAL)
              for p in REHEATING],
            *[declared("perturbations", p, BOUNCE) for p in PERTURBATION_OPTIONS],
            *background_keys(),
            *dynamics_and_potential_keys(), *likelihood_keys(), *efolds_keys(),
            *compare_keys(), *sampling_keys(), *report_keys()]
    # the Starobinsky mass has its own range (M > 0) under the same key
    keys.append(declared("slow_roll", STAROBINSKY_MASS_DECL, STAROBINSKY_MASS,
                         name="slow_roll.mass (starobinsky)"))
    out, seen = [], set()
    for k in keys:
        if k.id not in seen:
            seen.add(k.id)
            out.append(k)
    return out


STAROBINSKY_MASS_DECL = MODELS["bounce_physical_dressed_metric_starobinsky"]().declaration("mass")


def below(k: Key):
    if k.lower is None:
        return None
    if k.lower_open:
        return k.lower if k.kind != "integer" else None
    step = 1 if k.kind == "integer" else max(abs(k.lower), 1.0)
    return k.lower - step


def above(k: Key):
    if k.upper is None:
        return None
    if k.upper_open:
        return k.upper if k.kind != "integer" else None
    step = 1 if k.kind == "integer" else max(abs(k.upper), 1.0)
    return k.upper + step


def kinds(k: Key) -> list[tuple[str, object]]:
    """(kind of damage, value) for one key."""
    if k.kind in ("number", "integer"):
        out = [("string", "3.0"), ("list", [1.0, 2.0]), ("table", {"value": 1.0}),
               ("boolean", True), ("nan", math.nan), ("+inf", math.inf), ("-inf", -math.inf)]
        if k.kind == "integer":
            out.append(("fraction", 2.5))
        if below(k) is not None:
            out.append(("below range", below(k)))
        if above(k) is not None:
            out.append(("above range", above(k)))
        return out
    if k.kind == "string":
        out = [("number", 7), ("boolean", True), ("list", ["a"])]
        if k.choices:
            out.append(("unknown choice", "no_such_choice"))
        return out
    if k.kind == "boolean":
        return [("string", "yes"), ("number", 1)]
    if k.kind == "strings":
        return [("number", 7), ("numbers in list", [1, 2]), ("table", {"a": "b"})]
    if k.kind == "numbers":
        return [("string", "1e-5"), ("strings in list", ["a"]), ("nan in list", [math.nan]),
                ("inf in list", [math.inf])]
    raise ValueError(k.kind)


def key_cases() -> list:
    cases = []
    for k in all_keys():
        for what, value in kinds(k):
            cases.append(pytest.param(k, value, None, id=f"{k.command}:{k.id}:{what}"))
        if k.typo:
            last = k.path.rsplit(".", 1)[-1]
            typo = last.upper() if last.upper() != last else last + "s"
            cases.append(pytest.param(k, None, typo, id=f"{k.command}:{k.id}:misspelt"))
    return cases


def run_refused(tmp_path, monkeypatch, capsys, command: str, text: str, needle: str,
                code: int = 2, extra: tuple[str, ...] = ()) -> str:
    """Write ``text`` as run.toml, run ``command`` on it in tmp_path; the command must
    refuse with one line containing ``needle`` and leave tmp_path as it was."""
    monkeypatch.chdir(tmp_path)
    cfg = tmp_path / "run.toml"
    cfg.write_text(text)
    argv = [command, str(cfg), "--quiet", *extra]
    if command in (EFOLDS_CMD, COMPARE_CMD):
        argv += ["--output", str(tmp_path / "out")]
    before = listing(tmp_path)
    got = main(argv)
    captured = capsys.readouterr()
    line = one_line_error(captured.err, needle)
    assert got == code, (got, line)
    assert listing(tmp_path) == before
    return line


@pytest.mark.parametrize("key, value, typo", key_cases())
def test_configuration_keys_refuse_hostile_values(key, value, typo, tmp_path, monkeypatch,
                                                  capsys):
    if typo is not None:
        text = edited(key.base, key.path, drop=key.drop, rename=typo)
        needle = f"'{key.path.rsplit('.', 1)[0]}.{typo}'"
    else:
        text = edited(key.base, key.path, value, drop=key.drop)
        needle = f"'{key.path}'"
    run_refused(tmp_path, monkeypatch, capsys, key.command, text, needle)


_CASES = 'cases = [{ label = "LQC", dynamics = "isotropic" }]'


def _compare(new_cases: str) -> str:
    return COMPARE.replace(_CASES, new_cases)


# the [compare] case list and [likelihood] low_ell_range (structured values)
STRUCTURE_CASES = {
    "compare: cases not a list": (COMPARE_CMD, _compare("cases = 3"), "'compare.cases'"),
    "compare: a case not a table": (COMPARE_CMD, _compare('cases = ["LQC"]'),
                                    "'compare.cases'"),
    "compare: unknown dynamics in a case": (
        COMPARE_CMD, _compare('cases = [{ label = "x", dynamics = "string_gas" }]'),
        "'compare.cases[0].dynamics'"),
    "compare: case without dynamics": (COMPARE_CMD, _compare('cases = [{ label = "x" }]'),
                                       "missing key 'compare.cases[0].dynamics'"),
    "compare: label not a string": (
        COMPARE_CMD, _compare('cases = [{ label = 3, dynamics = "isotropic" }]'),
        "'compare.cases[0].label'"),
    "compare: unknown key in a case": (
        COMPARE_CMD, _compare('cases = [{ label = "x", dynamics = "condensate", rescal = 0.5 }]'),
        "'compare.cases[0].rescal'"),
    "compare: key of another dynamics": (
        COMPARE_CMD, _compare('cases = [{ label = "x", dynamics = "isotropic", rescale = 0.5 }]'),
        "'compare.cases[0].rescale'; allowed keys in [compare.cases[0]]: none"),
    "compare: condensate rescale negative": (
        COMPARE_CMD, _compare('cases = [{ label = "x", dynamics = "condensate", '
                              'rescale = -0.5 }]'), "rescale"),
    "compare: two cases with one label": (
        COMPARE_CMD, _compare('cases = [{ label = "x", dynamics = "isotropic" }, '
                              '{ label = "x", dynamics = "condensate" }]'), "distinct"),
    "compare: no case at all": (COMPARE_CMD, _compare("cases = []").replace(
        "shear_ratios = [1e-5]\n", ""), "no case"),
    "compare: negative shear ratio": (COMPARE_CMD, COMPARE.replace(
        "shear_ratios = [1e-5]", "shear_ratios = [-1e-5]"), "'compare.shear_ratios'"),
    "likelihood: low_ell_range not a list": (SCORE, POWER_LAW.replace(
        "allow_overlap = false", "low_ell_range = 29"), "'likelihood.low_ell_range'"),
    "likelihood: low_ell_range of one number": (SCORE, POWER_LAW.replace(
        "allow_overlap = false", "low_ell_range = [2]"), "'likelihood.low_ell_range'"),
    "likelihood: low_ell_range reversed": (SCORE, POWER_LAW.replace(
        "allow_overlap = false", "low_ell_range = [29, 2]"), "'likelihood.low_ell_range'"),
    "likelihood: low_ell_range of fractions": (SCORE, POWER_LAW.replace(
        "allow_overlap = false", "low_ell_range = [2.5, 29]"), "'likelihood.low_ell_range'"),
    "likelihood: low_ell_range beyond the data": (SCORE, POWER_LAW.replace(
        '"bk18"]', '"planck2018_lowell_tt"]').replace(
        "allow_overlap = false", "low_ell_range = [20, 35]"), "ell = 30"),
}


@pytest.mark.parametrize("case", sorted(STRUCTURE_CASES))
def test_structured_values_refuse_damage(case, tmp_path, monkeypatch, capsys):
    command, text, needle = STRUCTURE_CASES[case]
    run_refused(tmp_path, monkeypatch, capsys, command, text, needle)


# points a model cannot evaluate (exit code 1, the values named) and values it refuses only
# once the background is known (exit code 2, the key named as the configuration spells it)
EVALUATION_CASES = {
    "plateau bounce that never stops inflating": (
        PHYSICAL.replace("bounce_physical_dressed_metric",
                         "bounce_physical_dressed_metric_starobinsky"), 1,
        "bounce_physical.log10_potential_fraction = -11.6"),
    "too little inflation for N_*": (
        PHYSICAL.replace("log10_potential_fraction = -11.6", "log10_potential_fraction = -50.0"),
        1, "bounce_physical.log10_potential_fraction = -50"),
    "N_inflation no bounce gives": (
        PHYSICAL.replace("log10_potential_fraction = -11.6", "N_inflation = 1.5"), 1,
        "bounce_physical.N_inflation = 1.5"),
    "N_star beyond the inflation": (PHYSICAL.replace("N_star = 55.0", "N_star = 150.0"), 1,
                                    "reheating.N_star = 150"),
    "massless field (was named 'mass')": (PHYSICAL.replace("mass = 1.2e-6", "mass = 0.0"), 2,
                                          "'bounce_physical.mass' = 0"),
    "reheating denser than the end of inflation": (
        PHYSICAL_HISTORY.replace("log10_reheating_density = -20.0",
                                 "log10_reheating_density = -1.0"), 2,
        "'reheating.log10_reheating_density' = -1"),
}


@pytest.mark.parametrize("case", sorted(EVALUATION_CASES))
def test_points_refused_on_evaluation(case, tmp_path, monkeypatch, capsys):
    text, code, needle = EVALUATION_CASES[case]
    run_refused(tmp_path, monkeypatch, capsys, SCORE, text, needle, code=code)


# -- data files: a user's constraint set, a user's low-ell table, a spectra table ------------

USER_SET = """
name = "mine"
""" + USER_SET_CITATION + """
[[term]]
quantity = "n_s"
kind = "gaussian"
mean = 0.96
sigma = 0.01

[[term]]
quantity = "ln_1e10_As"
kind = "gaussian"
mean = 3.04
sigma = 0.02

[[term]]
quantity = "r"
kind = "upper_limit"
limit = 0.05
confidence = 0.95

[[correlation]]
quantities = ["n_s", "ln_1e10_As"]
rho = 0.1
"""

_N_S = 'quantity = "n_s"\nkind = "gaussian"\nmean = 0.96\nsigma = 0.01'
_R = 'quantity = "r"\nkind = "upper_limit"\nlimit = 0.05\nconfidence = 0.95'
_CORR = 'quantities = ["n_s", "ln_1e10_As"]\nrho = 0.1'


def _set(old: str, new: str) -> str:
    assert old in USER_SET, old
    return USER_SET.replace(old, new, 1)


# (file text or bytes, piece the one-line message must contain); not among the set-file
# cases of test_constraint_sets.py (missing or negative sigma, unknown kind or quantity, ...)
USER_SET_CASES = {
    "sigma NaN": (_set("sigma = 0.01", "sigma = nan"), "term[0].sigma"),
    "sigma +inf": (_set("sigma = 0.01", "sigma = inf"), "term[0].sigma"),
    "sigma a string": (_set("sigma = 0.01", 'sigma = "0.01"'), "term[0].sigma"),
    "sigma above 1e3": (_set("sigma = 0.01", "sigma = 1e4"), "term[0].sigma"),
    "sigma zero": (_set("sigma = 0.01", "sigma = 0.0"), "term[0].sigma"),
    "mean NaN": (_set("mean = 0.96", "mean = nan"), "term[0].mean"),
    "mean -inf": (_set("mean = 0.96", "mean = -inf"), "term[0].mean"),
    "mean outside the declared n_s range": (_set("mean = 0.96", "mean = 5.0"), "term[0].mean"),
    "mean a boolean": (_set("mean = 0.96", "mean = true"), "term[0].mean"),
    "mean missing": (_set("mean = 0.96\n", ""), "term[0].mean"),
    "quantity missing": (_set('quantity = "n_s"\n', ""), "term[0].quantity"),
    "kind missing": (_set('kind = "gaussian"\n', ""), "term[0].kind"),
    "quantity twice": (_set('quantity = "ln_1e10_As"\nkind = "gaussian"\nmean = 3.04',
                            'quantity = "n_s"\nkind = "gaussian"\nmean = 0.97'),
                       "appears twice"),
    "unknown key in a term": (_set("sigma = 0.01", "sigma = 0.01\nweight = 2.0"),
                              "term[0].weight"),
    "limit negative": (_set("limit = 0.05", "limit = -0.05"), "term[2].limit"),
    "limit zero": (_set("limit = 0.05", "limit = 0.0"), "term[2].limit"),
    "limit above r's range": (_set("limit = 0.05", "limit = 50.0"), "term[2].limit"),
    "limit NaN": (_set("limit = 0.05", "limit = nan"), "term[2].limit"),
    "confidence zero": (_set("confidence = 0.95", "confidence = 0.0"), "term[2].confidence"),
    "confidence NaN": (_set("confidence = 0.95", "confidence = nan"), "term[2].confidence"),
    "confidence missing": (_set("confidence = 0.95\n", ""), "term[2].confidence"),
    "sigma on an upper limit": (_set("confidence = 0.95", "confidence = 0.95\nsigma = 0.01"),
                                "term[2].sigma"),
    "upper limit on n_s": (_set(_N_S, 'quantity = "n_s"\nkind = "upper_limit"\nlimit = 0.05\n'
                                'confidence = 0.95'), "term[0].kind"),
    "no term": (USER_SET[:USER_SET.index("[[term]]")], "[[term]]"),
    "term not a list": (USER_SET[:USER_SET.index("[[term]]")] + "term = 1\n", "'term'"),
    "term entry not a table": (USER_SET[:USER_SET.index("[[term]]")] + "term = [1]\n",
                               "term[0]"),
    "correlation of 1": (_set("rho = 0.1", "rho = 1.0"), "correlation[0].rho"),
    "correlation NaN": (_set("rho = 0.1", "rho = nan"), "correlation[0].rho"),
    "correlation missing rho": (_set("rho = 0.1", ""), "correlation[0].rho"),
    "correlation of a quantity with itself": (
        _set('quantities = ["n_s", "ln_1e10_As"]', 'quantities = ["n_s", "n_s"]'),
        "correlation[0].quantities"),
    "correlation with the upper-limit term": (
        _set('quantities = ["n_s", "ln_1e10_As"]', 'quantities = ["n_s", "r"]'),
        "correlation[0].quantities"),
    "correlation of one quantity": (
        _set('quantities = ["n_s", "ln_1e10_As"]', 'quantities = ["n_s"]'),
        "correlation[0].quantities"),
    "correlation with an unknown key": (_set("rho = 0.1", "rho = 0.1\nsign = 1"),
                                        "correlation[0].sign"),
    "correlation not a list": (USER_SET[:USER_SET.index("[[correlation]]")]
                               .replace("pivot = 0.05", "pivot = 0.05\ncorrelation = 1"),
                               "'correlation'"),
    "overlap empty": (_set('overlap = ["test"]', "overlap = []"), "'overlap'"),
    "overlap tag with a space": (_set('overlap = ["test"]', 'overlap = ["my data"]'),
                                 "'overlap'"),
    "overlap missing": (_set('overlap = ["test"]\n', ""), "'overlap'"),
    "name with a space": (_set('name = "mine"', 'name = "my set"'), "'name'"),
    "name empty": (_set('name = "mine"', 'name = ""'), "'name'"),
    "name missing": (_set('name = "mine"\n', ""), "'name'"),
    "title only spaces": (_set('title = "my set"', 'title = "   "'), "'title'"),
    "pivot zero": (_set("pivot = 0.05", "pivot = 0.0"), "pivot"),
    "pivot above 1 Mpc^-1": (_set("pivot = 0.05", "pivot = 100.0"), "pivot"),
    "pivot NaN": (_set("pivot = 0.05", "pivot = nan"), "pivot"),
    "pivot missing": (_set("pivot = 0.05\n", ""), "pivot"),
    "forecast a string": (_set("forecast = false", 'forecast = "no"'), "'forecast'"),
    "forecast missing": (_set("forecast = false\n", ""), "'forecast'"),
    "unknown kind of set file": (_set('name = "mine"', 'name = "mine"\nkind = "galaxies"'),
                                 "'kind'"),
    "empty file": ("", "'name'"),
    "not UTF-8": (b"name = \"\xff\xfe\"\n", "not UTF-8"),
}


LOW_ELL = """
name = "my_low_ell"
kind = "temperature_low_ell"
title = "t"
citation = "c"
arxiv = "0"
table = "t"
data_combination = "d"
forecast = false
overlap = ["mine"]
units = "micro-K^2"
interval = "highest_density"
interval_probability = 0.6827
approximation = "a"
overlap_treatment = "o"
columns = ["ell", "D_measured", "minus_68", "plus_68", "D_reference"]
rows = [
  [2, 225.895, 132.369, 533.062, 1016.73],
  [3, 936.920, 450.471, 1212.308, 963.727],
  [4, 692.238, 294.111, 666.469, 912.608],
]

[reference]
citation = "c"
arxiv = "1"
table = "t"
ln_1e10_As = 3.044
n_s = 0.9649
r = 0.0
pivot = 0.05
"""

_ROW2 = "[2, 225.895, 132.369, 533.062, 1016.73]"


def _low(old: str, new: str) -> str:
    assert old in LOW_ELL, old
    return LOW_ELL.replace(old, new, 1)


# beyond the cases of test_lowell_likelihood.py (ell outside 2-29, not increasing, a missing
# column, a short row, a negative interval, an unknown key, no reference)
LOW_ELL_CASES = {
    "ell not an integer": (_low(_ROW2, "[2.5, 225.895, 132.369, 533.062, 1016.73]"),
                           "must be an integer"),
    "ell a string": (_low(_ROW2, '["2", 225.895, 132.369, 533.062, 1016.73]'), "rows[0]"),
    "D_measured NaN": (_low(_ROW2, "[2, nan, 132.369, 533.062, 1016.73]"), "rows[0]"),
    "plus_68 +inf": (_low(_ROW2, "[2, 225.895, 132.369, inf, 1016.73]"), "rows[0]"),
    "D_measured negative": (_low(_ROW2, "[2, -225.895, 132.369, 533.062, 1016.73]"),
                            "rows[0]"),
    "D_reference zero": (_low(_ROW2, "[2, 225.895, 132.369, 533.062, 0.0]"), "rows[0]"),
    "plus_68 negative": (_low(_ROW2, "[2, 225.895, 132.369, -533.062, 1016.73]"), "rows[0]"),
    "minus_68 zero": (_low(_ROW2, "[2, 225.895, 0.0, 533.062, 1016.73]"), "rows[0]"),
    "a row too long": (_low(_ROW2, "[2, 225.895, 132.369, 533.062, 1016.73, 1.0]"),
                       "rows[0]"),
    "a row as a table": (_low(_ROW2 + ",", "{ ell = 2 },"), "rows[0]"),
    "rows empty": (LOW_ELL[:LOW_ELL.index("rows = [")] + "rows = []\n"
                   + LOW_ELL[LOW_ELL.index("[reference]"):], "'rows'"),
    "rows missing": (LOW_ELL[:LOW_ELL.index("rows = [")]
                     + LOW_ELL[LOW_ELL.index("[reference]"):], "'rows'"),
    "ell decreasing": (_low("[4, 692.238", "[1, 692.238").replace("[1, 692.238", "[4, 692.238")
                       .replace("[3, 936.920", "[5, 936.920"), "increasing order"),
    "columns reordered": (_low('["ell", "D_measured"', '["D_measured", "ell"'), "'columns'"),
    "interval probability 1": (_low("interval_probability = 0.6827",
                                    "interval_probability = 1.0"), "interval_probability"),
    "interval probability NaN": (_low("interval_probability = 0.6827",
                                      "interval_probability = nan"), "interval_probability"),
    "interval of another kind": (_low('interval = "highest_density"',
                                      'interval = "equal_tailed"'), "'interval'"),
    "reference without ln_1e10_As": (_low("ln_1e10_As = 3.044\n", ""), "ln_1e10_As"),
    "reference r negative": (_low("r = 0.0", "r = -0.1"), "reference.r"),
    "reference pivot zero": (_low("pivot = 0.05", "pivot = 0.0"), "reference.pivot"),
    "reference unknown key": (_low("pivot = 0.05", "pivot = 0.05\nh = 0.7"), "reference.h"),
    "reference citation empty": (_low('[reference]\ncitation = "c"', '[reference]\ncitation = ""'),
                                 "citation"),
    "overlap empty": (_low('overlap = ["mine"]', "overlap = []"), "'overlap'"),
    "units missing": (_low('units = "micro-K^2"\n', ""), "'units'"),
    "forecast missing": (_low("forecast = false\n", ""), "'forecast'"),
    "name with a dash": (_low('name = "my_low_ell"', 'name = "my-low-ell"'), "'name'"),
}


def _file_refused(tmp_path, monkeypatch, capsys, name, content, needle, config):
    path = tmp_path / name
    if isinstance(content, bytes):
        path.write_bytes(content)
    else:
        path.write_text(content)
    line = run_refused(tmp_path, monkeypatch, capsys, SCORE, config, needle)
    assert name in line, line


@pytest.mark.parametrize("case", sorted(USER_SET_CASES))
def test_user_constraint_set_files_refuse_damage(case, tmp_path, monkeypatch, capsys):
    content, needle = USER_SET_CASES[case]
    _file_refused(tmp_path, monkeypatch, capsys, "mine.toml", content, needle,
                  POWER_LAW.replace('sets = ["planck2018_base", "bk18"]', 'files = ["mine.toml"]'))


@pytest.mark.parametrize("case", sorted(LOW_ELL_CASES))
def test_user_low_ell_files_refuse_damage(case, tmp_path, monkeypatch, capsys):
    content, needle = LOW_ELL_CASES[case]
    _file_refused(tmp_path, monkeypatch, capsys, "low.toml", content, needle,
                  POWER_LAW.replace('sets = ["planck2018_base", "bk18"]',
                                    'sets = ["planck2018_base"]\nfiles = ["low.toml"]'))


SPECTRA = """# k [Mpc^-1], P_s, P_t
k,P_s,P_t
1e-5,2.1e-9,2.1e-11
1e-3,2.1e-9,2.1e-11
1e-1,2.1e-9,2.1e-11
10.0,2.1e-9,2.1e-11
"""


def _csv(old: str, new: str) -> str:
    assert old in SPECTRA, old
    return SPECTRA.replace(old, new, 1)


# (file text or bytes, piece the message must contain)
SPECTRA_CASES = {
    "k decreasing": (_csv("1e-3,", "1e-6,"), "'k' must be strictly increasing"),
    "k repeated": (_csv("1e-3,", "1e-5,"), "'k' must be strictly increasing"),
    "k negative": (_csv("1e-5,", "-1e-5,"), "'k'"),
    "k zero": (_csv("1e-5,", "0.0,"), "'k'"),
    "P_s negative": (_csv("1e-3,2.1e-9", "1e-3,-2.1e-9"), "scalar"),
    "P_s zero": (_csv("1e-3,2.1e-9", "1e-3,0.0"), "scalar"),
    "P_t negative": (_csv("1e-3,2.1e-9,2.1e-11", "1e-3,2.1e-9,-2.1e-11"), "tensor"),
    "P_t zero in one row only": (_csv("1e-3,2.1e-9,2.1e-11", "1e-3,2.1e-9,0.0"), "tensor"),
    "one row": ("k,P_s,P_t\n1e-3,2.1e-9,2.1e-11\n", "at least 2 rows"),
    "header only": ("k,P_s,P_t\n", "at least 2 rows"),
    "NaN cell": (_csv("1e-3,2.1e-9", "1e-3,nan"), "line 4: 'P_s' must be finite"),
    "inf cell": (_csv("1e-3,2.1e-9,2.1e-11", "1e-3,2.1e-9,inf"), "line 4: 'P_t' must be"),
    "empty cell": (_csv("1e-3,2.1e-9", "1e-3,"), "line 4: 'P_s'"),
    "text cell": (_csv("1e-3,", "one,"), "line 4: 'k' = 'one' is not a number"),
    "missing column": (SPECTRA.replace(",P_t", "").replace(",2.1e-11", ""), "header"),
    "extra column": (SPECTRA.replace("P_s,P_t", "P_s,P_t,P_x"), "header"),
    "column twice": (SPECTRA.replace("k,P_s,P_t", "k,P_s,P_t,P_s")
                     .replace("2.1e-11\n", "2.1e-11,2.1e-9\n"), "header"),
    "columns misspelt": (SPECTRA.replace("P_s", "Ps"), "header"),
    "short row": (_csv("1e-3,2.1e-9,2.1e-11", "1e-3,2.1e-9"), "line 4: expected 3 values"),
    "long row": (_csv("1e-3,2.1e-9,2.1e-11", "1e-3,2.1e-9,2.1e-11,1"), "line 4: expected 3"),
    "empty file": ("", "is empty"),
    "comments only": ("# nothing here\n# still nothing\n", "is empty"),
    "not UTF-8": (b"k,P_s,P_t\n\xff\xfe,1,1\n", "not UTF-8"),
    "semicolon separated": (SPECTRA.replace(",", ";"), "header"),
}


@pytest.mark.parametrize("case", sorted(SPECTRA_CASES))
def test_spectra_table_files_refuse_damage(case, tmp_path, monkeypatch, capsys):
    content, needle = SPECTRA_CASES[case]
    _file_refused(tmp_path, monkeypatch, capsys, "spectra.csv", content, needle, TABLE)


# the files a configuration names, absent or of the wrong kind
NAMED_FILE_CASES = {
    "spectra table absent": (TABLE.replace("spectra.csv", "absent.csv"), "absent.csv"),
    "spectra table is a folder": (TABLE.replace("spectra.csv", "folder"), "is a folder"),
    "spectra table file not a string": (TABLE.replace('"spectra.csv"', "3"), "'table.file'"),
    "no [table] section": (TABLE[:TABLE.index("[table]")], "[table]"),
    "unknown key in [table]": (TABLE + 'format = "csv"\n', "'table.format'"),
    "user set file absent": (POWER_LAW.replace('sets = ["planck2018_base", "bk18"]',
                                               'files = ["absent.toml"]'), "absent.toml"),
    "user set file is a folder": (POWER_LAW.replace('sets = ["planck2018_base", "bk18"]',
                                                    'files = ["folder"]'), "'folder' is a folder"),
    "unknown shipped set": (POWER_LAW.replace('"bk18"', '"bk99"'), "bk99"),
    "shipped set named twice": (POWER_LAW.replace('"bk18"', '"planck2018_base"'),
                                "planck2018_base"),
    "no [model] section": (POWER_LAW[POWER_LAW.index("[power_law]"):], "[model]"),
    "unknown model": (POWER_LAW.replace('"power_law"', '"power_law2"'), "model.spectra"),
    "model section missing": (POWER_LAW[:POWER_LAW.index("[power_law]")]
                              + POWER_LAW[POWER_LAW.index("[likelihood]"):], "[power_law]"),
    "model name not a string": (POWER_LAW.replace('"power_law"\n', "1\n", 1), "model.spectra"),
    "unknown top-level section": (POWER_LAW + "[plots]\ncolour = 1\n", "plots"),
    "retired section [run]": (POWER_LAW + "[run]\nname = 'x'\n", "[run]"),
    "section given as a value": ("likelihood = 3\n" + POWER_LAW[:POWER_LAW.index("[likelihood]")],
                                 "likelihood: must be a table"),
    "configuration not TOML": (POWER_LAW + "[model\n", "not valid TOML"),
    "n_t an unknown word": (POWER_LAW.replace('n_t = "consistency"', 'n_t = "consistent"'),
                            "'power_law.n_t'"),
    "both amplitudes": (POWER_LAW.replace("ln_1e10_As = 3.044", "ln_1e10_As = 3.044\n"
                                          "A_s = 2.1e-9"), "A_s"),
    "no amplitude": (POWER_LAW.replace("ln_1e10_As = 3.044\n", ""), "ln_1e10_As"),
    "slow roll with two amplitudes": (SLOW_ROLL_MASS.replace("mass = 1.16e-6", "mass = 1.16e-6"
                                                             "\nln_1e10_As = 3.0"), "mass"),
    "physical bounce without a background choice": (
        PHYSICAL.replace("log10_potential_fraction = -11.6\n", ""),
        "'bounce_physical.N_inflation'; got neither"),
    "physical bounce with two background choices": (
        PHYSICAL.replace("mass = 1.2e-6", "mass = 1.2e-6\nN_inflation = 70.0"),
        "'bounce_physical.N_inflation'; got log10_potential_fraction, N_inflation"),
    "physical bounce without [reheating]": (PHYSICAL[:PHYSICAL.index("[reheating]")],
                                            "[reheating]"),
    "reheating history half given": (PHYSICAL.replace("N_star = 55.0",
                                                      "equation_of_state = 0.0"),
                                     "log10_reheating_density"),
}


@pytest.mark.parametrize("case", sorted(NAMED_FILE_CASES))
def test_score_configurations_refuse_structure_damage(case, tmp_path, monkeypatch, capsys):
    text, needle = NAMED_FILE_CASES[case]
    (tmp_path / "folder").mkdir()
    run_refused(tmp_path, monkeypatch, capsys, SCORE, text, needle)


# -- prior files -----------------------------------------------------------------------------

PRIOR = """
[prior]
model = "power_law"
title = "test prior"
[parameters.ln_1e10_As]
role = "sampled"
distribution = "uniform"
min = 2.8
max = 3.3
[parameters.n_s]
role = "sampled"
distribution = "gaussian"
mean = 0.965
sigma = 0.01
min = 0.9
max = 1.05
""" + FIXED_HIGHER_ORDER + """[parameters.A_s]
role = "derived"
"""

PRIOR_RUN = """
[likelihood]
sets = ["planck2018_base"]
[sampling]
prior = "prior.toml"
walkers = 8
max_steps = 50
"""

_AS = 'role = "sampled"\ndistribution = "uniform"\nmin = 2.8\nmax = 3.3'
_NS_SIGMA = "sigma = 0.01"
_R_FIXED = '[parameters.r]\nrole = "fixed"\nvalue = 0.0'

PHASE_PRIOR = """
[prior]
model = "bounce_physical_dressed_metric"
[parameters.mass]
role = "fixed"
value = 1.21e-6
[parameters.critical_density]
role = "fixed"
value = 0.40937
[parameters.N_star]
role = "fixed"
value = 55.0
[parameters.N_inflation]
role = "sampled"
distribution = "efolds_from_phase"
min = 60.0
max = 250.0
[parameters.N_inflation.phase]
potential = "quadratic"
mass = 1.21e-6
n_samples = 60
seed = 1
"""


def _prior(old: str, new: str, text: str = PRIOR) -> str:
    assert old in text, old
    return text.replace(old, new, 1)


def _phase(old: str, new: str) -> str:
    return _prior(old, new, PHASE_PRIOR)


# (prior file text or bytes, piece the message must contain); beyond the prior cases of
# test_sampling_cli.py and test_bad_input.py (min above max, unknown distribution or role,
# log-uniform through zero, a parameter the model lacks or misses, gaussian without sigma,
# walkers' centre outside, old key names, bounds outside the declared range ...)
PRIOR_CASES = {
    "min equal to max": (_prior("max = 3.3", "max = 2.8"), "parameters.ln_1e10_As.max"),
    "min NaN": (_prior("min = 2.8", "min = nan"), "parameters.ln_1e10_As.min"),
    "max +inf": (_prior("max = 3.3", "max = inf"), "parameters.ln_1e10_As.max"),
    "min a string": (_prior("min = 2.8", 'min = "2.8"'), "parameters.ln_1e10_As.min"),
    "max missing": (_prior("max = 3.3\n", ""), "parameters.ln_1e10_As.max"),
    "min missing": (_prior("min = 2.8\n", ""), "parameters.ln_1e10_As.min"),
    "n_s min below its declared range": (_prior("min = 0.9", "min = -1.0"),
                                         "parameters.n_s.min"),
    "gaussian sigma zero": (_prior(_NS_SIGMA, "sigma = 0.0"), "parameters.n_s.sigma"),
    "gaussian sigma negative": (_prior(_NS_SIGMA, "sigma = -0.01"), "parameters.n_s.sigma"),
    "gaussian sigma NaN": (_prior(_NS_SIGMA, "sigma = nan"), "parameters.n_s.sigma"),
    "gaussian mean missing": (_prior("mean = 0.965\n", ""), "parameters.n_s.mean"),
    "gaussian mean a string": (_prior("mean = 0.965", 'mean = "high"'), "parameters.n_s.mean"),
    "mean on a uniform prior": (_prior("max = 3.3", "max = 3.3\nmean = 3.0"),
                                "parameters.ln_1e10_As.mean"),
    "walkers' spread zero": (_prior("max = 3.3", "max = 3.3\nwalkers_spread = 0.0"),
                             "parameters.ln_1e10_As.walkers_spread"),
    "walkers' spread negative": (_prior("max = 3.3", "max = 3.3\nwalkers_spread = -0.1"),
                                 "parameters.ln_1e10_As.walkers_spread"),
    "nested value outside [min, max]": (_prior("max = 3.3", "max = 3.3\nnested_value = 9.0"),
                                        "parameters.ln_1e10_As.nested_value"),
    "fixed without a value": (_prior(_R_FIXED, '[parameters.r]\nrole = "fixed"'),
                              "parameters.r.value"),
    "fixed value a string": (_prior(_R_FIXED, '[parameters.r]\nrole = "fixed"\nvalue = "0"'),
                             "parameters.r.value"),
    "fixed value NaN": (_prior(_R_FIXED, '[parameters.r]\nrole = "fixed"\nvalue = nan'),
                        "parameters.r.value"),
    "fixed value outside the declared range": (
        _prior(_R_FIXED, '[parameters.r]\nrole = "fixed"\nvalue = -0.1'), "parameters.r.value"),
    "fixed with a distribution": (_prior(_R_FIXED, _R_FIXED + '\ndistribution = "uniform"'),
                                  "parameters.r.distribution"),
    "derived with bounds": (_prior('[parameters.A_s]\nrole = "derived"',
                                   '[parameters.A_s]\nrole = "derived"\nmin = 0.0'),
                            "parameters.A_s.min"),
    "role missing": (_prior('role = "sampled"\ndistribution = "uniform"',
                            'distribution = "uniform"'), "parameters.ln_1e10_As.role"),
    "label not a string": (_prior("max = 3.3", "max = 3.3\nlabel = 1"),
                           "parameters.ln_1e10_As.label"),
    "unknown key in a parameter": (_prior("max = 3.3", "max = 3.3\nstep = 0.1"),
                                   "parameters.ln_1e10_As.step"),
    "phase table on a uniform prior": (_prior("max = 3.3", "max = 3.3\nphase = { seed = 1 }"),
                                       "parameters.ln_1e10_As.phase"),
    "nothing sampled": (_prior(_AS, 'role = "fixed"\nvalue = 3.0').replace(
        'role = "sampled"\ndistribution = "gaussian"\nmean = 0.965\nsigma = 0.01\nmin = 0.9\n'
        'max = 1.05', 'role = "fixed"\nvalue = 0.965'), "no parameter has role = 'sampled'"),
    "parameter given as a value": (_prior(_R_FIXED, "[parameters]\nr = 0.0"), "parameters.r"),
    "no [parameters]": (PRIOR[:PRIOR.index("[parameters.ln_1e10_As]")], "[parameters]"),
    "no [prior]": (PRIOR[PRIOR.index("[parameters.ln_1e10_As]"):], "[prior]"),
    "model missing": (_prior('model = "power_law"\n', ""), "prior.model"),
    "model unknown": (_prior('model = "power_law"', 'model = "power_law_2"'), "prior.model"),
    "model that cannot be sampled": (_prior('model = "power_law"', 'model = "bounce"'),
                                     "too slow to sample"),
    "title not a string": (_prior('title = "test prior"', "title = 3"), "prior.title"),
    "unknown key in [prior]": (_prior('title = "test prior"', 'title = "t"\nauthor = "me"'),
                               "prior.author"),
    "unknown top-level table": (PRIOR + "[walkers]\nn = 3\n", "walkers"),
    "empty file": ("", "[prior]"),
    "not UTF-8": (b"[prior]\nmodel = \"\xff\"\n", "not UTF-8"),
    "phase: n_samples below 10": (_phase("n_samples = 60", "n_samples = 5"),
                                  "parameters.N_inflation.phase.n_samples"),
    "phase: seed negative": (_phase("seed = 1", "seed = -1"),
                             "parameters.N_inflation.phase.seed"),
    "phase: mass negative": (_phase("mass = 1.21e-6", "mass = -1.0"),
                             "parameters.N_inflation.phase.mass"),
    "phase: mass above its range": (_phase("mass = 1.21e-6", "mass = 1.0"),
                                    "parameters.N_inflation.phase.mass"),
    "phase: unknown potential": (_phase('potential = "quadratic"', 'potential = "cubic"'),
                                 "parameters.N_inflation.phase.potential"),
    "phase: unknown dynamics": (_phase("seed = 1", 'seed = 1\ndynamics = "string_gas"'),
                                "parameters.N_inflation.phase.dynamics"),
    "phase: critical density above its range": (
        _phase("seed = 1", "seed = 1\ncritical_density = 1e9"),
        "parameters.N_inflation.phase.critical_density"),
    "phase: start density above rho_c": (_phase("seed = 1", "seed = 1\nstart_density = 0.5"),
                                         "parameters.N_inflation.phase.start_density"),
    "phase: unknown key": (_phase("seed = 1", "seed = 1\nbins = 3"),
                           "parameters.N_inflation.phase.bins"),
    "phase table missing": (PHASE_PRIOR[:PHASE_PRIOR.index("[parameters.N_inflation.phase]")],
                            "parameters.N_inflation.phase"),
}


@pytest.mark.parametrize("case", sorted(PRIOR_CASES))
def test_prior_files_refuse_damage(case, tmp_path, monkeypatch, capsys):
    content, needle = PRIOR_CASES[case]
    path = tmp_path / "prior.toml"
    if isinstance(content, bytes):
        path.write_bytes(content)
    else:
        path.write_text(content)
    run_refused(tmp_path, monkeypatch, capsys, SAMPLE_CMD, PRIOR_RUN, needle)


# -- damaged run folders: 'report' and 'sample --resume' -------------------------------------

RUN = """
[likelihood]
sets = ["planck2018_base"]
[sampling]
prior = "power_law"
walkers = 8
max_steps = 60
min_steps = 60
checkpoint_every = 30
seed = 3
progress = false
prior_survey_draws = 20
""" + SMALL_REPORT


@pytest.fixture(scope="module")
def finished_run(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("finished")
    (tmp / "run.toml").write_text(RUN)
    assert main(["sample", str(tmp / "run.toml"), "--output", str(tmp / "run"), "--quiet"]) == 0
    return tmp / "run"


def _manifest(edit):
    def damage(folder):
        m = json.loads((folder / "manifest.json").read_text())
        edit(m)
        (folder / "manifest.json").write_text(json.dumps(m))
    return damage


def _write(name, content):
    def damage(folder):
        path = folder / name
        if content is None:
            path.unlink()
        elif isinstance(content, bytes):
            path.write_bytes(content)
        else:
            path.write_text(content)
    return damage


def _both(*damages):
    def damage(folder):
        for d in damages:
            d(folder)
    return damage


def _cell(name, column, value):
    def damage(folder):
        lines = (folder / name).read_text().splitlines()
        i = lines[0].split(",").index(column)
        row = lines[1].split(",")
        row[i] = value
        lines[1] = ",".join(row)
        (folder / name).write_text("\n".join(lines) + "\n")
    return damage


def _set_config(section, key, value):
    return _manifest(lambda m: m["config"].setdefault(section, {}).__setitem__(key, value))


# (damage, piece the message must contain); beyond test_run_folders.py (a manifest without
# 'config' or holding a list, chain.csv of random bytes, samples.csv with its header only,
# chain.csv without log_posterior)
REPORT_DAMAGE = {
    "manifest missing": (_write("manifest.json", None), "manifest.json"),
    "manifest empty": (_write("manifest.json", ""), "manifest.json"),
    "manifest not JSON": (_write("manifest.json", "{\"format\": "), "manifest.json"),
    "manifest not UTF-8": (_write("manifest.json", b"{\"a\": \"\xff\"}"), "manifest.json"),
    "manifest config a number": (_manifest(lambda m: m.__setitem__("config", 3)), "config"),
    "manifest prior text not TOML": (
        _manifest(lambda m: m.__setitem__("prior_file_text", "[prior\n")), "prior"),
    "manifest model unknown": (_manifest(lambda m: m.__setitem__("model", "power_law_2")),
                               "power_law_2"),
    "manifest stored report grid 1": (_set_config("report", "grid", 1), "report.grid"),
    "manifest stored report key unknown": (_set_config("report", "colour", 1),
                                           "report.colour"),
    "samples and chain missing": (_both(_write("samples.csv", None),
                                        _write("chain.csv", None)), "chain.csv"),
    "samples empty file": (_write("samples.csv", ""), "samples.csv"),
    "samples with a text cell": (_cell("samples.csv", "n_s", "high"), "samples.csv"),
    "samples with a NaN parameter": (_cell("samples.csv", "n_s", "nan"), "column(s) n_s"),
    "samples with an empty cell": (_cell("samples.csv", "r", ""), "column(s) r"),
    "samples with an infinite parameter": (_cell("samples.csv", "ln_1e10_As", "inf"),
                                           "column(s) ln_1e10_As"),
    "samples without a sampled column": (
        lambda f: (f / "samples.csv").write_text("\n".join(
            ",".join(c for i, c in enumerate(line.split(",")) if i != 3)
            for line in (f / "samples.csv").read_text().splitlines()) + "\n"), "n_s"),
}


@pytest.mark.parametrize("case", sorted(REPORT_DAMAGE))
def test_report_refuses_a_damaged_run_folder(case, finished_run, tmp_path, monkeypatch,
                                             capsys):
    import shutil

    folder = tmp_path / "run"
    shutil.copytree(finished_run, folder)
    damage, needle = REPORT_DAMAGE[case]
    damage(folder)
    monkeypatch.chdir(tmp_path)
    before = listing(tmp_path)
    got = main(["report", str(folder), "--quiet"])
    line = one_line_error(capsys.readouterr().err, needle)
    assert got == 2, line
    assert listing(tmp_path) == before


RESUME_DAMAGE = {
    "checkpoint missing": (_write("state.npz", None), "no readable checkpoint"),
    "checkpoint of random bytes": (_write("state.npz", bytes(range(256)) * 8), "state.npz"),
    "checkpoint a folder": (lambda f: (f / "state.npz").unlink() or (f / "state.npz").mkdir(),
                            "no readable checkpoint"),
    "chain missing": (_write("chain.csv", None), "chain.csv"),
    "chain of random bytes": (_write("chain.csv", bytes(range(256)) * 8), "chain.csv"),
    "run folder is a file": (lambda f: __import__("shutil").rmtree(f) or f.write_text("x"),
                             "run"),
}


@pytest.mark.parametrize("case", sorted(RESUME_DAMAGE))
def test_resume_refuses_a_damaged_run_folder(case, finished_run, tmp_path, monkeypatch,
                                             capsys):
    import shutil

    folder = tmp_path / "run"
    shutil.copytree(finished_run, folder)
    damage, needle = RESUME_DAMAGE[case]
    damage(folder)
    (tmp_path / "run.toml").write_text(RUN.replace("max_steps = 60", "max_steps = 90"))
    monkeypatch.chdir(tmp_path)
    before = listing(tmp_path)
    sizes = {p: p.stat().st_size for p in folder.rglob("*") if p.is_file()} \
        if folder.is_dir() else {}
    got = main(["sample", "run.toml", "--output", str(folder), "--resume", "--quiet"])
    line = one_line_error(capsys.readouterr().err, needle)
    assert got == 2, line
    assert listing(tmp_path) == before
    assert sizes == ({p: p.stat().st_size for p in folder.rglob("*") if p.is_file()}
                     if folder.is_dir() else {})


# -- the command line itself ------------------------------------------------------------------

# (arguments after the command, files to write first {name: text}, piece of the message);
# beyond test_cli_contract.py and test_sampling_cli.py (an absent configuration per command,
# --points 1, a demo output that is a file, sample --workers 0)
ARGUMENT_CASES = {
    "unknown command": (["bogus"], {}, "invalid choice: 'bogus'"),
    "configuration argument missing": (["score"], {}, "config"),
    "unknown option": (["score", "run.toml", "--fast"], {"run.toml": POWER_LAW}, "--fast"),
    "option of another command": (["score", "run.toml", "--resume"], {"run.toml": POWER_LAW},
                                  "--resume"),
    "--workers not a number": (["efolds", "run.toml", "--workers", "many"],
                               {"run.toml": EFOLDS}, "--workers"),
    "--workers a fraction": (["efolds", "run.toml", "--workers", "2.5"], {"run.toml": EFOLDS},
                             "--workers"),
    "--workers zero": (["efolds", "run.toml", "--workers", "0"], {"run.toml": EFOLDS},
                       "'--workers' = 0"),
    "--workers negative": (["compare", "run.toml", "--workers", "-3"], {"run.toml": COMPARE},
                           "'--workers' = -3"),
    "--workers above the maximum": (["efolds", "run.toml", "--workers", str(MAX_WORKERS + 1)],
                                    {"run.toml": EFOLDS}, f"'--workers' = {MAX_WORKERS + 1}"),
    "--output without a folder": (["efolds", "run.toml", "--output"], {"run.toml": EFOLDS},
                                  "--output"),
    "--output is a file": (["efolds", "run.toml", "--output", "a_file"],
                           {"run.toml": EFOLDS, "a_file": "x"}, "a_file"),
    "configuration is a folder": (["score", "folder"], {}, "'folder' is a folder"),
    "configuration not UTF-8": (["score", "run.toml"], {"run.toml": b"[model]\n\xff = 1\n"},
                                "not UTF-8"),
    "configuration empty": (["score", "run.toml"], {"run.toml": ""}, "[model]"),
    "--plugin absent": (["score", "run.toml", "--plugin", "absent.py"],
                        {"run.toml": POWER_LAW}, "absent.py"),
    "--plugin a folder": (["score", "run.toml", "--plugin", "folder"], {"run.toml": POWER_LAW},
                          "is a directory"),
    "--plugin not Python": (["score", "run.toml", "--plugin", "p.txt"],
                            {"run.toml": POWER_LAW, "p.txt": "x = 1\n"}, "not a .py file"),
    "--plugin with a syntax error": (["score", "run.toml", "--plugin", "p.py"],
                                     {"run.toml": POWER_LAW, "p.py": "def (:\n"},
                                     "syntax error at line 1"),
    "--plugin that raises": (["score", "run.toml", "--plugin", "p.py"],
                             {"run.toml": POWER_LAW, "p.py": "1 / 0\n"},
                             "ZeroDivisionError"),
    "report on a file": (["report", "a_file"], {"a_file": "x"}, "a_file"),
    "report on an empty folder": (["report", "folder"], {}, "folder"),
    "constraints of a damaged set file": (["constraints", "mine.toml"],
                                          {"mine.toml": USER_SET.replace("sigma = 0.01",
                                                                         "sigma = nan")},
                                          "term[0].sigma"),
    "transfer-check --seed negative": (["transfer-check", "--seed", "-1"], {}, "--seed"),
    "transfer-check --backgrounds zero": (["transfer-check", "--backgrounds", "0"], {},
                                          "--backgrounds"),
    "transfer-check --backgrounds not a number": (["transfer-check", "--backgrounds", "x"], {},
                                                  "--backgrounds"),
    "transfer-check --points not a number": (["transfer-check", "--points", "1e3"], {},
                                             "--points"),
    "transfer-check --x-min NaN": (["transfer-check", "--x-min", "nan"], {}, "--x-min"),
    "transfer-check --x-min below the table": (["transfer-check", "--x-min", "0.001"], {},
                                               "--x-min"),
    "transfer-check --x-min above the table": (["transfer-check", "--x-min", "1000"], {},
                                               "--x-min"),
    "transfer-check unknown state": (["transfer-check", "--state", "vacuum"], {}, "--state"),
    "transfer-check unknown potential": (["transfer-check", "--potential", "cubic"], {},
                                         "--potential"),
    "transfer-check unknown prescription": (["transfer-check", "--prescription", "hybrid"], {},
                                            "--prescription"),
    "transfer-check state the prescription lacks": (
        ["transfer-check", "--prescription", "deformed_algebra", "--state", "low_energy"], {},
        "--state"),
}


@pytest.mark.parametrize("case", sorted(ARGUMENT_CASES))
def test_command_line_refuses_bad_arguments(case, tmp_path, monkeypatch, capsys):
    args, files, needle = ARGUMENT_CASES[case]
    monkeypatch.chdir(tmp_path)
    (tmp_path / "folder").mkdir()
    for name, content in files.items():
        if isinstance(content, bytes):
            (tmp_path / name).write_bytes(content)
        else:
            (tmp_path / name).write_text(content)
    before = listing(tmp_path)
    got = main([*args, "--quiet"])
    captured = capsys.readouterr()
    line = one_line_error(captured.err, needle)
    assert got == 2, line
    assert captured.out == ""
    assert listing(tmp_path) == before
