"""Pieces of configuration and data-file text that several test files build on (each a valid
fragment; a test breaks one key of it with str.replace)."""

# a power-law point scored against Planck 2018 and BICEP/Keck 2018 (score tests)
POWER_LAW_SCORE = """
[model]
spectra = "power_law"

[power_law]
ln_1e10_As = 3.044
n_s = 0.9649
r = 0.01

[likelihood]
sets = ["planck2018_base", "bk18"]
"""

# prior-file tables fixing the power law's higher-order numbers at zero
FIXED_HIGHER_ORDER = """[parameters.r]
role = "fixed"
value = 0.0
[parameters.running]
role = "fixed"
value = 0.0
[parameters.running_of_running]
role = "fixed"
value = 0.0
"""

# the citation header of a user's constraint-set file (after its name; our own made-up set)
USER_SET_CITATION = """title = "my set"
citation = "me"
arxiv = "0000.00000"
table = "Table 1"
data_combination = "made up for a test"
pivot = 0.05
forecast = false
overlap = ["test"]
upper_limit_treatment = "half-Gaussian, sigma = limit / 1.959964"
"""

# a [report] section small enough for tests
SMALL_REPORT = """[report]
grid = 4
prior_draws = 20
rescore_samples = 5
band_samples = 10
evidence_draws = 100
"""
