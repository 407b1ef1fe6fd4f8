"""make_atmosphere(scattering_matrix_moments=...): layout, checks, warnings, and a scalar
solve that the matrix leaves unchanged.

Outside sources: the Rayleigh matrix of Hansen and Travis (1974) (lamina.phase.rayleigh_matrix
is tested against it in test_polarization.py), the bound |F_ij| <= F11 of Hovenier, van der
Mee and Domke (2004, section 3.2), and the scalar moments of Henyey and Greenstein (1941).
Section and equation numbers of the references are cited from memory.
"""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

import lamina
from lamina import phase

ELEMENTS = ["alpha1", "alpha2", "alpha3", "alpha4", "beta1", "beta2"]


def _hg_matrix(g: float, n_moments: int) -> np.ndarray:
    """Henyey-Greenstein alpha1 = g^l with a small Rayleigh-like polarization (physical)."""
    coefficients = np.zeros((n_moments, 6))
    coefficients[:, 0] = phase.henyey_greenstein(g, n_moments)
    coefficients[:, 3] = 0.5 * coefficients[:, 0]
    coefficients[:3, 4] += 0.1 * phase.rayleigh_matrix()[:, 4]
    return coefficients


def test_layout_and_phase_moments_from_alpha1():
    rayleigh = phase.rayleigh_matrix(0.03)
    atm = lamina.make_atmosphere([0.1, 0.5], 1.0, scattering_matrix_moments=rayleigh)
    assert atm.scattering_matrix_moments.dims == ("layer", "moment", "element")
    assert list(atm.element.values) == ELEMENTS
    np.testing.assert_array_equal(atm.phase_moments, np.stack([phase.rayleigh(0.03)] * 2))
    assert atm.scattering_matrix_moments.attrs["units"] == "1"
    assert "generalized spherical" in atm.scattering_matrix_moments.attrs["long_name"]


def test_ragged_rows_and_unpolarized_layers_are_padded():
    rayleigh = phase.rayleigh_matrix()
    hg = phase.henyey_greenstein(0.6, 12)
    atm = lamina.make_atmosphere(
        [0.1, 0.5, 1.0], 1.0, [phase.rayleigh(), hg, hg],
        scattering_matrix_moments=[rayleigh, None, _hg_matrix(0.6, 12)])
    matrix = atm.scattering_matrix_moments.values
    assert matrix.shape == (3, 12, 6)
    np.testing.assert_array_equal(matrix[0, :3], rayleigh)
    np.testing.assert_array_equal(matrix[0, 3:], 0.0)
    np.testing.assert_array_equal(matrix[1, :, 0], hg)  # None: alpha1 alone
    np.testing.assert_array_equal(matrix[1, :, 1:], 0.0)
    np.testing.assert_array_equal(atm.phase_moments.values, matrix[..., 0])


def test_dataarray_with_labels_in_any_order_and_extra_dims():
    rayleigh = phase.rayleigh_matrix([0.0, 0.03])  # (wavelength, moment, element)
    order = ["beta2", "beta1", "alpha4", "alpha3", "alpha2", "alpha1"]
    given = xr.DataArray(rayleigh[..., ::-1], dims=("wavelength", "moment", "element"),
                         coords={"element": order})
    atm = lamina.make_atmosphere([[0.1, 0.2], [0.3, 0.4]], 1.0,
                                 scattering_matrix_moments=given, extra_dims=["wavelength"])
    assert atm.scattering_matrix_moments.dims == ("wavelength", "layer", "moment", "element")
    np.testing.assert_array_equal(atm.scattering_matrix_moments.values[:, 1], rayleigh)


def test_scalar_solve_ignores_the_matrix():
    # the scalar solution uses alpha1 = phase_moments only: bit for bit the same outputs
    hg = phase.henyey_greenstein(0.7, 64)
    matrix = _hg_matrix(0.7, 64)
    kwargs = {"streams": 8, "sun_zenith": 30.0, "surface_albedo": 0.1,
              "view_zenith": [0.0, 60.0], "view_azimuth": [0.0, 90.0]}
    scalar = lamina.solve(lamina.make_atmosphere([0.2, 1.0], [1.0, 0.9],
                                                 [phase.rayleigh(), hg]), **kwargs)
    with_matrix = lamina.solve(lamina.make_atmosphere(
        [0.2, 1.0], [1.0, 0.9], scattering_matrix_moments=[phase.rayleigh_matrix(), matrix]),
        **kwargs)
    for name in ("flux_up", "flux_down_diffuse", "radiance"):
        np.testing.assert_array_equal(with_matrix[name].values, scalar[name].values)


def test_bad_matrices():
    rayleigh = phase.rayleigh_matrix()
    with pytest.raises(ValueError, match="must have shape .* with 6 elements"):
        lamina.make_atmosphere([0.1], 1.0, scattering_matrix_moments=rayleigh[:, :4])
    with pytest.raises(ValueError, match="must have 6 elements"):
        lamina.make_atmosphere([0.1], 1.0, scattering_matrix_moments=xr.DataArray(
            rayleigh[:, :5], dims=("moment", "element")))
    with pytest.raises(ValueError, match="must label its elements"):
        lamina.make_atmosphere([0.1], 1.0, scattering_matrix_moments=xr.DataArray(
            rayleigh, dims=("moment", "element"), coords={"element": list("abcdef")}))
    shifted = rayleigh.copy()
    shifted[0, 0] = 0.9
    with pytest.raises(ValueError, match="alpha1_0 = 1 .* layer 0 has alpha1_0 = 0.9"):
        lamina.make_atmosphere([0.1], 1.0, scattering_matrix_moments=shifted)
    nan = rayleigh.copy()
    nan[2, 4] = np.nan
    with pytest.raises(ValueError, match="scattering_matrix_moments must be finite"):
        lamina.make_atmosphere([0.1], 1.0, scattering_matrix_moments=nan)
    low = rayleigh.copy()
    low[1, 4] = 0.1
    with pytest.raises(ValueError,
                       match=r"beta1 = 0 at moments 0 and 1 .*; layer 0, moment 1 has 0.1"):
        lamina.make_atmosphere([0.1], 1.0, scattering_matrix_moments=low)
    with pytest.raises(ValueError, match="phase_moments must equal the alpha1"):
        lamina.make_atmosphere([0.1], 1.0, phase.henyey_greenstein(0.5, 3),
                               scattering_matrix_moments=rayleigh)
    with pytest.raises(ValueError, match="has 2 layers but optical_depth has 1"):
        lamina.make_atmosphere([0.1], 1.0, scattering_matrix_moments=[rayleigh, rayleigh])
    with pytest.raises(ValueError, match="None for a layer"):
        lamina.make_atmosphere([0.1, 0.2], 1.0, scattering_matrix_moments=[rayleigh, None])
    with pytest.raises(TypeError, match="needs phase_moments or scattering_matrix_moments"):
        lamina.make_atmosphere([0.1], 1.0)


def test_warning_names_layer_and_angle_where_f12_exceeds_f11():
    # |F12| <= F11 for every physical matrix (Hovenier et al. 2004, section 3.2); a Rayleigh
    # beta1 one and a half times too large gives |F12| = 1.125 > F11 = 0.75 at 90 degrees
    bad = phase.rayleigh_matrix()
    bad[2, 4] *= 1.5
    with pytest.warns(lamina.LaminaWarning, match=r"layer 1 give \|F12\| > F11 at a scattering "
                      r"angle of 90 degrees"):
        lamina.make_atmosphere([0.1, 0.2], 1.0,
                               scattering_matrix_moments=[phase.rayleigh_matrix(), bad])


def test_check_atmosphere_sees_an_edited_matrix():
    atm = lamina.make_atmosphere([0.1], 1.0, scattering_matrix_moments=phase.rayleigh_matrix())
    atm["phase_moments"][0, 2] = 0.2
    with pytest.raises(ValueError, match="phase_moments must equal the alpha1"):
        lamina.check_atmosphere(atm)


def test_mie_matrices_per_wavelength_go_in_without_a_warning():
    # a Mie matrix cut at 24 moments crosses F11 only by its truncation error (F22 = F11 and
    # |F44| = F11 at backscatter for spheres; Bohren and Huffman 1983), below the warning's
    # 1e-3 of F11's maximum; it goes in as a (wavelength, moment, element) DataArray
    optics = lamina.mie.lognormal_optics([0.44, 0.55, 0.87], 1.45 + 0.001j, 0.1, 1.5,
                                         n_moments=24, scattering_matrix=True)
    tau = xr.DataArray(np.tile([0.1, 0.3], (3, 1)), dims=("wavelength", "layer"),
                       coords={"wavelength": optics.wavelength.values})
    rayleigh = xr.DataArray(phase.rayleigh_matrix(0.03, 24), dims=("moment", "element"))
    aerosol = optics.scattering_matrix_moments.drop_vars(["moment", "element"])
    matrix = xr.concat([rayleigh.expand_dims(wavelength=optics.wavelength.values), aerosol],
                       dim="layer")
    atm = lamina.make_atmosphere(tau, 1.0, scattering_matrix_moments=matrix)
    assert atm.scattering_matrix_moments.dims == ("wavelength", "layer", "moment", "element")
    # phase_moments are the matrix's alpha1, which equals mie's phase_moments to round-off
    np.testing.assert_allclose(atm.phase_moments.values[:, 1], optics.phase_moments.values,
                               rtol=0, atol=1e-13)
    np.testing.assert_array_equal(atm.phase_moments.values[:, 0, :3], [phase.rayleigh(0.03)] * 3)
