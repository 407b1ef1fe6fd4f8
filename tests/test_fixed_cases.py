"""Every output of the fixed cases equals the stored one (a guard for reorganisations).

A regression check, not an accuracy check: the stored values were computed by lamina itself
before the code was reorganised (see ``fixed_cases.py``). Outputs must agree within
``TOLERANCE`` of the largest value of the same output (of the fluxes, for the flux
differences ``flux_net`` and ``flux_divergence``).

Why not bit for bit: the store was computed with OpenBLAS's AVX-512 kernels, and OpenBLAS
picks its kernels by CPU at run time. Measured on an AVX2 machine (AMD EPYC, OpenBLAS 0.3.30
from scipy 1.17.1), the thermal cases agree to 4e-15 and the cases with conservative layers
differ by up to 1.1e-10 of the fluxes: LAPACK's round-off, amplified by the eigen-solutions
of layers whose albedo is capped at 1 - 1e-12 (triangular factors conditioned about 1e6;
docs/development/numerics.md). A reorganisation mistake moves outputs by far more.
"""

from __future__ import annotations

import numpy as np
import pytest

from fixed_cases import STORE, cases, outputs

CASES = cases()
TOLERANCE = 1e-9
FLUX_DIFFERENCES = ("flux_net", "flux_divergence")


@pytest.fixture(scope="module")
def stored():
    with np.load(STORE) as data:
        return {key: data[key] for key in data.files}


@pytest.mark.parametrize("case", sorted(CASES))
def test_outputs_equal_the_stored_ones(case, stored):
    got = outputs(CASES[case]())
    expected = {key.split("/", 1)[1]: value for key, value in stored.items()
                if key.split("/", 1)[0] == case}
    assert sorted(got) == sorted(expected)
    fluxes = max(np.max(np.abs(expected[name])) for name in ("flux_up", "flux_down")
                 if name in expected)
    for name, values in got.items():
        reference = expected[name]
        assert values.shape == reference.shape, name
        scale = max(np.max(np.abs(reference), initial=0.0), np.finfo(float).tiny)
        if name in FLUX_DIFFERENCES:
            scale = max(scale, fluxes)
        difference = np.max(np.abs(values - reference), initial=0.0)
        assert difference <= TOLERANCE * scale, (name, difference / scale)
