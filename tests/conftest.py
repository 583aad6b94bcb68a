"""Test-suite settings: Hypothesis draws the same examples on every run.

The "repeatable" profile makes every property test derandomized (examples derived from the
test's source, not a random seed) and keeps no example database, so a run can fail only for a
change in the code, never for a new draw. A failure found is pinned with ``@example``.
"""

from hypothesis import settings

settings.register_profile("repeatable", derandomize=True, database=None, print_blob=True)
settings.load_profile("repeatable")


def pytest_addoption(parser):
    parser.addoption(
        "--seed-offset", type=int, default=0,
        help="add this to every integer seed given to numpy.random.default_rng (tests and package), "
             "to check that Monte Carlo tests pass for other seeds than their own, e.g. "
             "`for k in 1 2 3; do python -m pytest -q tests/reference --seed-offset $k; done`")


def pytest_configure(config):
    offset = config.getoption("--seed-offset")
    if offset:
        import numpy as np

        plain = np.random.default_rng

        def shifted(seed=None):
            if isinstance(seed, int | np.integer) and not isinstance(seed, bool):
                seed = int(seed) + offset
            return plain(seed)

        np.random.default_rng = shifted
