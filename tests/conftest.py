"""Test-suite settings.

Hypothesis runs derandomised (the same examples every run: the suite is
deterministic) and without per-example deadlines, because the first call of a
numba kernel includes its compilation.
"""

from hypothesis import HealthCheck, settings

settings.register_profile(
    "wetcycle", deadline=None, derandomize=True, max_examples=60,
    suppress_health_check=[HealthCheck.too_slow],
)
settings.load_profile("wetcycle")
