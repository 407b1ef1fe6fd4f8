"""Shared pytest configuration: one BLAS thread, and the hypothesis profiles.

One BLAS thread
    The suite runs thousands of small LAPACK problems; OpenBLAS's own threads only add
    hand-over costs there and, on a shared two-core machine, made the README's
    ``python -m pytest`` take 7.5 minutes instead of two. The BLAS pools of numpy and scipy
    (whose LAPACK the kernel calls) are limited to one thread with threadpoolctl as soon as
    pytest loads this file, and ``OPENBLAS_NUM_THREADS=1`` is set (unless already given) for
    the subprocesses some tests start.

The hypothesis profiles

Two profiles, chosen with the environment variable ``HYPOTHESIS_PROFILE``:

``ci`` (the default)
    Few examples per property, no deadline (the machine is shared, and tests never time
    anything) and a derandomised search, so that CI runs the same examples every time and a
    failure reproduces. No example database is written, and failures are not shrunk (a
    solver run per shrinking step can take minutes); rerun with the long profile to
    minimise one.
``long``
    2000 examples per property with a random search and shrinking, for an occasional hunt:
    ``HYPOTHESIS_PROFILE=long python -m pytest tests/test_properties.py``. Failures are
    stored in hypothesis's example database (``.hypothesis/``, which git ignores) and the
    reproduction blob is printed.

The ``too_slow`` and ``data_too_large`` health checks are suppressed: an example is a whole
solver run, which legitimately takes tens of milliseconds.
"""

from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # for subprocesses started by tests

import numpy  # noqa: E402  (load the BLAS libraries that threadpoolctl is to limit)
import scipy.linalg  # noqa: E402, F401
from hypothesis import HealthCheck, Phase, settings  # noqa: E402
from threadpoolctl import threadpool_limits  # noqa: E402

#: Kept for the whole session: limits every BLAS library loaded so far (numpy's and scipy's)
#: to one thread; the limit lasts until the object is garbage collected or restored.
BLAS_LIMIT = threadpool_limits(limits=1, user_api="blas")
del numpy

_SLOW_IS_FINE = [HealthCheck.too_slow, HealthCheck.data_too_large]

settings.register_profile(
    "ci",
    max_examples=30,
    deadline=None,
    derandomize=True,
    database=None,
    # no shrinking in CI: a failure is reported at once with its (unminimised) example;
    # the long profile shrinks
    phases=[Phase.explicit, Phase.reuse, Phase.generate],
    print_blob=True,
    suppress_health_check=_SLOW_IS_FINE,
)
settings.register_profile(
    "long",
    max_examples=2000,
    deadline=None,
    print_blob=True,
    suppress_health_check=_SLOW_IS_FINE,
)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci"))


def pytest_configure(config):
    # hypothesis's failure report touches mypy_extensions.TypedDict, which warns; with the
    # project's warnings-as-errors that warning would replace the report of the failure
    config.addinivalue_line(
        "filterwarnings",
        "ignore:mypy_extensions.TypedDict is deprecated:DeprecationWarning",
    )
