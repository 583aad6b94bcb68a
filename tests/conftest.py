"""Test-suite settings: Hypothesis draws the same examples on every run.

The "repeatable" profile makes every property test derandomized (examples derived from the
test's source, not a random seed) and keeps no example database, so a run can fail only for a
change in the code, never for a new draw. A failure found is pinned with ``@example``.
"""

from hypothesis import settings

settings.register_profile("repeatable", derandomize=True, database=None, print_blob=True)
settings.load_profile("repeatable")
