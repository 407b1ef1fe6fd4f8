"""Output unit labels follow from the inputs; every label is a valid CF (UDUNITS) unit."""

from __future__ import annotations

import numpy as np
import pytest
from cf_units import Unit

from lamina._units import output_units, to_si


def _same_dimension(label: str, reference: str) -> bool:
    # cf_units (the UDUNITS-2 library that CF names) decides convertibility
    return Unit(label).is_convertible(Unit(reference))


def test_a_beam_with_spectral_units_carries_them_to_every_output():
    units = output_units(True, "W m-2 nm-1", None)
    assert units.flux == "W m-2 nm-1"
    assert _same_dimension(units.radiance, "W m-2 nm-1 sr-1")
    assert _same_dimension(units.heating_rate, "K s-1 nm-1")
    assert units.note is None


def test_a_beam_without_units_gives_outputs_relative_to_the_irradiance():
    units = output_units(True, None, None)
    assert units.flux == "1"
    assert units.radiance == "sr-1"
    # heating per unit irradiance: (K/day) per (W m-2)
    assert _same_dimension(units.heating_rate, "K s-1 m2 W-1")
    assert "relative to sun_irradiance" in units.note


def test_a_band_thermal_run_is_in_watts_per_square_metre():
    units = output_units(False, None, "W m-2")
    assert (units.flux, units.radiance, units.heating_rate) == ("W m-2", "W m-2 sr-1",
                                                                 "K day-1")


def test_a_monochromatic_thermal_run_is_per_unit_wavenumber():
    # radiance per cm-1 of wavenumber: W m-2 sr-1 (cm-1)-1 = W m-2 sr-1 cm
    units = output_units(False, None, "W m-2 cm")
    assert _same_dimension(units.flux, "W m-2 cm")
    assert _same_dimension(units.heating_rate, "K s-1 cm")


def test_a_beam_in_other_units_than_the_thermal_source_is_refused():
    with pytest.raises(ValueError, match="both sources must be in the same units"):
        output_units(True, "W m-2 nm-1", "W m-2")


def test_a_beam_without_units_beside_a_thermal_source_says_what_it_assumed():
    units = output_units(True, None, "W m-2")
    assert units.flux == "W m-2" and "taken to be in W m-2" in units.note


def test_only_a_diffuse_top_radiance_gives_fluxes_in_its_units_times_sr():
    assert output_units(False, None, None, "W m-2 sr-1").flux == "W m-2"
    relative = output_units(False, None, None)
    assert relative.flux == "sr" and "top_diffuse_radiance" in relative.note


@pytest.mark.parametrize("case", [(True, "W m-2 nm-1", None), (True, None, None),
                                  (False, None, "W m-2"), (False, None, "W m-2 cm"),
                                  (True, "mW m-2 um-1", None), (False, None, None)])
def test_every_label_is_a_valid_udunits_string(case):
    units = output_units(*case)
    for label in (units.flux, units.radiance, units.heating_rate):
        Unit(label)   # raises ValueError for a string UDUNITS cannot parse


def test_to_si_converts_temperatures_with_an_offset():
    # 0 degC = 273.15 K (definition of the Celsius scale)
    np.testing.assert_allclose(to_si(np.array([0.0, -273.15]), "degC", "temperature"),
                               [273.15, 0.0], atol=1e-12)


def test_to_si_refuses_a_unit_that_is_not_text():
    with pytest.raises(TypeError, match="the units of pressure must be a string"):
        to_si(np.array([1.0]), 100, "pressure")
