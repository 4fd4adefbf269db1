"""Hypothesis profiles for the fuzz suite.

``make test`` runs the short profile (a few examples per test, seconds in all); ``make fuzz``
sets ``ARENA_FUZZ=long`` for the long one (minutes). Only the fuzz tests use these settings
(through :func:`tests.fuzz.strategies.fuzz_settings`), so other hypothesis tests keep theirs.
"""

from __future__ import annotations

from hypothesis import HealthCheck, settings

_COMMON = {
    "deadline": None,  # no wall-clock limits: resource limits guard the heavy cases
    "suppress_health_check": [
        HealthCheck.too_slow,
        HealthCheck.function_scoped_fixture,
        HealthCheck.data_too_large,
        HealthCheck.filter_too_much,
    ],
}
# short: the same examples every run (a CI failure reproduces); long: new ones each time
settings.register_profile("fuzz-short", max_examples=6, derandomize=True, **_COMMON)
settings.register_profile("fuzz-long", max_examples=300, **_COMMON)
