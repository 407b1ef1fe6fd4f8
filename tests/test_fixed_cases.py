"""Every output of the fixed cases equals the stored one (a guard for reorganisations).

A regression check, not an accuracy check: the stored values were computed by lamina itself
before the code was reorganised (see ``fixed_cases.py``). Outputs must agree bit for bit or
within 1e-13 of the largest value of the same output.
"""

from __future__ import annotations

import numpy as np
import pytest

from fixed_cases import STORE, cases, outputs

CASES = cases()


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
    for name, values in got.items():
        reference = expected[name]
        assert values.shape == reference.shape, name
        scale = max(np.max(np.abs(reference), initial=0.0), np.finfo(float).tiny)
        difference = np.max(np.abs(values - reference), initial=0.0)
        assert difference <= 1e-13 * scale, (name, difference / scale)
