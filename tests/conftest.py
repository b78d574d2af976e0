"""Shared test settings: a derandomised hypothesis profile so every run checks the same examples.

``max_examples`` is kept modest so the whole suite stays within a few minutes on two cores; raise it
locally with ``HYPOTHESIS_PROFILE=thorough python -m pytest``.
"""

from __future__ import annotations

import os

# Small matrices: one BLAS thread is fastest and avoids oversubscribing a two-core machine.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

from hypothesis import HealthCheck, settings

settings.register_profile(
    "sampled",
    derandomize=True,
    deadline=None,
    max_examples=40,
    suppress_health_check=[HealthCheck.too_slow],
    print_blob=True,
)
settings.register_profile(
    "thorough",
    derandomize=True,
    deadline=None,
    max_examples=500,
    suppress_health_check=[HealthCheck.too_slow],
    print_blob=True,
)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "sampled"))
