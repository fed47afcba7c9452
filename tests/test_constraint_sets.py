"""The shipped constraint sets hold the published numbers; set files are validated."""

import pytest
from config_texts import USER_SET_CITATION
from scipy.stats import halfnorm, norm

from bouncelike.errors import InputError
from bouncelike.likelihood.sets import available_sets, load_constraint_set

SHIPPED = {
    "planck2018_base",
    "planck2018_base_bao",
    "planck2018_running",
    "planck2018_running_of_running",
    "planck2018_r",
    "planck2018_bk15",
    "bk18",
    "pr4_bk18",
    "louis2025_ns",
    "forecast_satellite_r",
    "forecast_ground_r",
}


def _terms(name):
    return {t.quantity: t for t in load_constraint_set(name).terms}


def _gauss(name, quantity):
    t = _terms(name)[quantity]
    assert t.kind == "gaussian"
    return (t.mean, t.sigma)


def _limit(name):
    t = _terms(name)["r"]
    assert t.kind == "upper_limit"
    return (t.limit, t.confidence)


def test_shipped_names():
    assert set(available_sets()) == SHIPPED


def test_planck2018_base():
    # Planck 2018 VI, arXiv:1807.06209, Table 2, TT,TE,EE+lowE+lensing (68%).
    assert _gauss("planck2018_base", "ln_1e10_As") == (3.044, 0.014)
    assert _gauss("planck2018_base", "n_s") == (0.9649, 0.0042)
    s = load_constraint_set("planck2018_base")
    assert s.arxiv == "1807.06209" and s.pivot == 0.05 and not s.is_forecast


def test_planck2018_base_bao():
    # Planck 2018 VI, arXiv:1807.06209, Table 2, TT,TE,EE+lowE+lensing+BAO (68%).
    assert _gauss("planck2018_base_bao", "ln_1e10_As") == (3.047, 0.014)
    assert _gauss("planck2018_base_bao", "n_s") == (0.9665, 0.0038)


def test_planck2018_running():
    # Planck 2018 VI, arXiv:1807.06209, LCDM + running (68%; values as in physics notes sec. 6).
    assert _gauss("planck2018_running", "n_s") == (0.9641, 0.0044)
    assert _gauss("planck2018_running", "running") == (-0.0045, 0.0067)


def test_planck2018_running_of_running():
    # Planck 2018 VI, arXiv:1807.06209, LCDM + running + running of running (68%).
    assert _gauss("planck2018_running_of_running", "n_s") == (0.9647, 0.0043)
    assert _gauss("planck2018_running_of_running", "running") == (0.0011, 0.0099)
    assert _gauss("planck2018_running_of_running", "running_of_running") == (0.009, 0.012)


def test_tensor_limits():
    # Planck 2018 X, arXiv:1807.06211, abstract: r_0.002 < 0.10 (Planck), < 0.056 (+BK15), 95%.
    assert _limit("planck2018_r") == (0.10, 0.95)
    assert _limit("planck2018_bk15") == (0.056, 0.95)
    assert load_constraint_set("planck2018_r").pivot == 0.002
    assert load_constraint_set("planck2018_bk15").pivot == 0.002
    # BICEP/Keck, PRL 127 (2021) 151301, arXiv:2110.00483, abstract: r_0.05 < 0.036 (95%).
    assert _limit("bk18") == (0.036, 0.95)
    assert load_constraint_set("bk18").pivot == 0.05
    # Tristram et al., PRD 105 (2022) 083524: r < 0.032 (95%), Planck PR4 + BK18 + BAO.
    assert _limit("pr4_bk18") == (0.032, 0.95)


def test_louis2025_tilt():
    # Louis et al. 2025, arXiv:2503.14452, abstract: n_s = 0.974 +- 0.003.
    assert _gauss("louis2025_ns", "n_s") == (0.974, 0.003)
    assert load_constraint_set("louis2025_ns").arxiv == "2503.14452"


def test_forecasts_are_labelled():
    # Satellite goal sigma(r) = 0.001 (arXiv:2202.02773); ground goal r < 0.001 at 95%
    # (arXiv:2008.12619).
    sat = load_constraint_set("forecast_satellite_r")
    ground = load_constraint_set("forecast_ground_r")
    assert sat.is_forecast and ground.is_forecast
    assert _gauss("forecast_satellite_r", "r") == (0.0, 0.001)
    assert _limit("forecast_ground_r") == (0.001, 0.95)
    assert "FORECAST" in sat.title and "FORECAST" in ground.title
    for name in SHIPPED - {"forecast_satellite_r", "forecast_ground_r"}:
        assert not load_constraint_set(name).is_forecast, name


def test_every_set_is_cited_and_limits_state_their_treatment():
    for name in SHIPPED:
        s = load_constraint_set(name)
        assert s.citation and s.arxiv and s.table and s.data_combination and s.overlap_tags
        if any(t.kind == "upper_limit" for t in s.terms):
            assert "half-Gaussian" in s.upper_limit_treatment and "1.959964" in \
                s.upper_limit_treatment


def test_half_gaussian_width_against_scipy():
    # The half-Gaussian in r >= 0 whose 95 % point is the limit: sigma = limit / Phi^-1(0.975)
    # (scipy.stats.norm / halfnorm).
    t = _terms("bk18")["r"]
    assert t.sigma == pytest.approx(0.036 / norm.ppf(0.975), rel=1e-12)
    assert t.sigma == pytest.approx(0.036 / 1.959964, rel=1e-6)
    assert halfnorm.ppf(0.95, scale=t.sigma) == pytest.approx(0.036, rel=1e-12)


GOOD = """
name = "mine"
""" + USER_SET_CITATION + """
[[term]]
quantity = "n_s"
kind = "gaussian"
mean = 0.96
sigma = 0.01

[[term]]
quantity = "r"
kind = "upper_limit"
limit = 0.05
confidence = 0.95
"""


def test_user_set_file_loads(tmp_path):
    f = tmp_path / "mine.toml"
    f.write_text(GOOD)
    s = load_constraint_set(str(f))
    assert s.name == "mine" and s.quantities == ("n_s", "r")


@pytest.mark.parametrize(
    "edit,field",
    [
        (lambda t: t.replace("sigma = 0.01", ""), "term[0].sigma"),
        (lambda t: t.replace("sigma = 0.01", "sigma = -0.01"), "term[0].sigma"),
        (lambda t: t.replace('kind = "gaussian"', 'kind = "lorentzian"'), "term[0].kind"),
        (lambda t: t.replace('quantity = "n_s"', 'quantity = "w0"'), "term[0].quantity"),
        (lambda t: t.replace("pivot = 0.05", 'pivot = "0.05"'), "pivot"),
        (lambda t: t.replace('citation = "me"', ""), "citation"),
        (lambda t: t.replace("forecast = false", "forecast = false\ncolour = 1"), "colour"),
        (lambda t: t.replace("limit = 0.05", "limit = 0.05\nmean = 0.0"), "term[1].mean"),
        (lambda t: t.replace("confidence = 0.95", "confidence = 1.5"), "term[1].confidence"),
        (lambda t: t.replace('quantity = "r"', 'quantity = "n_s"'), "term[1]"),
        (lambda t: t.replace('upper_limit_treatment = "half-Gaussian, sigma = limit / 1.959964"',
                             ""), "upper_limit_treatment"),
        (lambda t: t + "\n[[term]\n", "not valid TOML"),
    ],
)
def test_malformed_set_file_names_the_field(tmp_path, edit, field):
    f = tmp_path / "bad.toml"
    f.write_text(edit(GOOD))
    with pytest.raises(InputError) as exc:
        load_constraint_set(str(f))
    msg = str(exc.value)
    assert "\n" not in msg
    assert field in msg


def test_unknown_set_lists_shipped_ones():
    with pytest.raises(InputError, match="unknown constraint set 'planck2099'.*bk18"):
        load_constraint_set("planck2099")
