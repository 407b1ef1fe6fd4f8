"""Property-based tests of the solver over random valid atmospheres (hypothesis).

Each property is an exact statement about the radiative transfer equation that must hold
for any valid input, whatever the number of streams:

- outputs are finite and non-negative (radiance, flux and mean intensity are physically
  non-negative; a round-off margin of ACCURACY times the incident energy scale is
  allowed and stated in each assertion);
- the boundary conditions (nothing but the given diffuse light enters at the top; a
  Lambertian surface sends up A F_down + (1 - A) pi B_surface) and hence energy balance:
  reflected + absorbed in the layers + absorbed by the surface = incident (exact);
- layers absorb, never emit, without a thermal source; conservative layers absorb nothing;
- reflection never exceeds the incident flux (exact);
- every diffuse output is non-decreasing in the surface albedo (a brighter Lambertian
  surface adds a non-negative source; exact);
- reciprocity of reflection: I(mu; mu0) / mu0 is symmetric in mu and mu0 for unit
  irradiance (Chandrasekhar 1950, Radiative Transfer, the reciprocity principle);
- an isothermal atmosphere over a surface at the same temperature under sky radiance
  B(T) has I = B(T) everywhere (Kirchhoff's law, the isothermal enclosure);
- splitting a layer in two, or inserting layers of zero optical thickness, changes nothing
  (the layering is a description, not physics; exact).

The sizes are capped (layers x streams <= MAX_COST) so that the default "ci" profile of
tests/conftest.py runs in seconds; ``HYPOTHESIS_PROFILE=long`` runs 2000 examples each.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from hypothesis import assume, example, given, note
from hypothesis import strategies as st

import lamina

#: Largest layers x streams drawn, to keep one solver run (with radiances) to ~0.1 s.
MAX_COST = 256
#: Absolute accuracy asked of every output, as a fraction of the incident energy scale: the
#: kernel documents conservation to 1e-9 of the incident flux (its conservative-scattering
#: cap w <= 1 - 1e-12 makes a diffusion mode with k ~ 2e-6, whose eigenvectors carry
#: round-off of about 1e-16 / k). Used as the round-off margin of quantities that must be
#: >= 0 and as the absolute tolerance of the exact identities below.
ACCURACY = 1e-9
#: Below the smallest normal double the absolute resolution is all there is (subnormals do
#: not carry 1e-9 relative precision), so every absolute tolerance has this floor added.
TINY = float(np.finfo(np.float64).tiny)
#: Henyey-Greenstein series are carried until g**l falls below this, so that the
#: truncated phase function is positive (a truncated series of a strongly forward-peaked
#: function goes negative at back-scattering angles, which would make negative single-
#: scattered radiance a property of the input, not of the solver).
SERIES_TAIL = 1e-14
FLUX_NAMES = ("flux_up", "flux_down_diffuse", "flux_down_direct", "flux_down",
              "mean_intensity")


# ------------------------------------------------------------------------------ strategies

optical_thickness = st.one_of(
    st.just(0.0),
    st.floats(0.0, 5.0),
    st.floats(1e-10, 1e-3),
    st.floats(5.0, 1e4),
)
albedo_values = st.one_of(st.just(1.0), st.just(0.0), st.floats(0.0, 1.0))
asymmetry = st.floats(-0.95, 0.95)
# a phase function: ("hg", g) or ("rayleigh", depolarization)
phase_choice = st.one_of(
    st.tuples(st.just("hg"), asymmetry),
    st.tuples(st.just("rayleigh"), st.floats(0.0, 0.1)),
)
sun_zeniths = st.floats(0.0, 89.9)
unit_interval = st.floats(0.0, 1.0)


@dataclasses.dataclass
class Case:
    """One random atmosphere and the solver options that go with it."""

    optical_depth: list[float]
    single_scattering_albedo: list[float]
    phases: list[tuple[str, float]]
    streams: int
    sun_zenith: float
    sun_irradiance: float
    surface_albedo: float
    temperature: list[float] | None = None
    wavenumber_band: tuple[float, float] | None = None
    top_diffuse_radiance: float = 0.0

    @property
    def nlayer(self) -> int:
        return len(self.optical_depth)

    def moments(self) -> np.ndarray:
        return phase_moments(self.phases, self.streams)

    def atmosphere(self):
        return lamina.make_atmosphere(self.optical_depth, self.single_scattering_albedo,
                                      self.moments(), temperature=self.temperature)

    def options(self, **extra) -> dict:
        options = dict(streams=self.streams, sun_zenith=self.sun_zenith,
                       sun_irradiance=self.sun_irradiance, surface_albedo=self.surface_albedo,
                       top_diffuse_radiance=self.top_diffuse_radiance)
        if self.wavenumber_band is not None:
            options["wavenumber_band"] = self.wavenumber_band
        options.update(extra)
        return options

    def solve(self, **extra):
        return lamina.solve(self.atmosphere(), **self.options(**extra))

    def scale(self) -> float:
        """The incident energy scale: beam, sky and the brightest Planck emitter."""
        mu0 = np.cos(np.radians(self.sun_zenith))
        total = self.sun_irradiance * mu0 + np.pi * self.top_diffuse_radiance
        if self.wavenumber_band is not None:
            total += np.pi * float(np.max(lamina.planck.band_radiance(
                np.asarray(self.temperature), *self.wavenumber_band)))
        return float(total)


def phase_moments(phases: list[tuple[str, float]], streams: int) -> np.ndarray:
    """Moments (layer, moment) of the drawn phase functions, long enough for delta-M."""
    largest = max([abs(value) for kind, value in phases if kind == "hg"] + [0.01])
    count = max(streams + 1, 3, int(np.ceil(np.log(SERIES_TAIL) / np.log(largest))) + 1)
    rows = []
    for kind, value in phases:
        if kind == "hg":
            rows.append(lamina.phase.henyey_greenstein(value, count))
        else:
            rows.append(lamina.phase.rayleigh(value, count))
    return np.stack(rows)


@st.composite
def cases(draw, thermal: bool | None = None, max_cost: int = MAX_COST) -> Case:
    """A random valid atmosphere: 1..50 layers, 2..64 streams, layers x streams capped."""
    streams = draw(st.integers(1, 32).map(lambda half: 2 * half))
    nlayer = draw(st.integers(1, max(1, min(50, max_cost // streams))))
    layers = st.lists
    case = Case(
        optical_depth=draw(layers(optical_thickness, min_size=nlayer, max_size=nlayer)),
        single_scattering_albedo=draw(layers(albedo_values, min_size=nlayer, max_size=nlayer)),
        phases=draw(layers(phase_choice, min_size=nlayer, max_size=nlayer)),
        streams=streams,
        sun_zenith=draw(sun_zeniths),
        sun_irradiance=draw(st.one_of(st.just(1.0), st.floats(0.0, 1500.0))),
        surface_albedo=draw(unit_interval),
    )
    if thermal is None:
        thermal = draw(st.booleans())
    if thermal:
        case.temperature = draw(layers(st.floats(0.0, 400.0), min_size=nlayer + 1,
                                       max_size=nlayer + 1))
        low = draw(st.floats(0.0, 3000.0))
        case.wavenumber_band = (low, low + draw(st.floats(1.0, 3000.0)))
        case.top_diffuse_radiance = draw(st.one_of(st.just(0.0), st.floats(0.0, 50.0)))
    return case


view_zenith_lists = st.lists(st.floats(0.0, 90.0), min_size=1, max_size=3, unique=True)
view_azimuth_lists = st.lists(st.floats(0.0, 360.0), min_size=1, max_size=3, unique=True)


# ------------------------------------------------------------------------------ helpers


def assert_non_negative(values, name: str, scale: float) -> None:
    values = np.asarray(values)
    assert np.all(np.isfinite(values)), f"{name} is not finite"
    # physically >= 0; round-off margin ACCURACY x the incident scale
    assert values.min() >= -ACCURACY * scale - TINY, (
        f"{name} goes negative: {values.min():.3e} (scale {scale:.3e})")


def close(a, b, rtol: float, atol: float) -> tuple[bool, float]:
    a, b = np.asarray(a), np.asarray(b)
    excess = np.abs(a - b) - (atol + TINY + rtol * np.abs(b))
    return bool(np.all(excess <= 0)), float(np.max(np.abs(a - b)))


# ------------------------------------------------------------------------------ properties


@given(case=cases(), view_zenith=view_zenith_lists, view_azimuth=view_azimuth_lists)
# found by hypothesis (a regression check): delta-M of a backward-peaked layer (g = -0.7,
# 2 streams) scaled chi_1 to -2.33 and the downward radiance at 80 degrees, azimuth 180,
# went to -0.0115
@example(case=Case([1.0], [1.0], [("hg", -0.7)], streams=2, sun_zenith=30.0,
                   sun_irradiance=1.0, surface_albedo=0.0),
         view_zenith=[80.0], view_azimuth=[180.0])
def test_outputs_are_finite_and_non_negative(case, view_zenith, view_azimuth):
    note(repr(case))
    out = case.solve(view_zenith=view_zenith, view_azimuth=view_azimuth)
    scale = max(case.scale(), 1e-300)
    for name in (*FLUX_NAMES, "actinic_flux", "radiance"):
        assert_non_negative(out[name].values, name, scale)
    assert np.all(np.isfinite(out.flux_divergence.values))
    assert np.all(np.isfinite(out.flux_net.values))


@given(case=cases())
# found (and shrunk) by hypothesis: a thin conservative layer with a Planck gradient puts
# 5.9e-9 of diffuse flux into the top boundary, where nothing may enter
@example(case=Case([0.015625], [1.0], [("hg", 0.25)], streams=2, sun_zenith=0.0,
                   sun_irradiance=1.0, surface_albedo=0.0, temperature=[0.0, 197.0],
                   wavenumber_band=(0.0, 124.0)))
def test_boundary_conditions_and_energy_balance(case):
    note(repr(case))
    out = case.solve()
    scale = case.scale()
    tolerance = ACCURACY * scale + TINY
    albedo = case.surface_albedo
    top = out.isel(level=0)
    bottom = out.isel(level=-1)
    # at the top only the sky's isotropic radiance enters diffusely: pi I_top (exact with
    # the double-Gauss quadrature, whose half-range weights integrate mu exactly)
    assert abs(float(top.flux_down_diffuse) - np.pi * case.top_diffuse_radiance) <= tolerance
    mu0 = np.cos(np.radians(case.sun_zenith))
    assert float(top.flux_down_direct) == pytest.approx(case.sun_irradiance * mu0,
                                                        rel=1e-14, abs=1e-300)
    # Lambertian surface: F_up = A F_down + (1 - A) pi B(T_surface)
    emitted = 0.0
    if case.wavenumber_band is not None:
        emitted = (1 - albedo) * np.pi * float(
            lamina.planck.band_radiance(case.temperature[-1], *case.wavenumber_band))
    assert abs(float(bottom.flux_up) - albedo * float(bottom.flux_down) - emitted) <= tolerance
    if case.wavenumber_band is None:
        # reflected + absorbed by the layers + absorbed by the surface = incident (exact)
        incident = case.sun_irradiance * mu0 + np.pi * case.top_diffuse_radiance
        absorbed = float(out.flux_divergence.sum())
        surface = (1 - albedo) * float(bottom.flux_down)
        assert abs(float(top.flux_up) + absorbed + surface - incident) <= tolerance
        # without emission, every layer absorbs a non-negative amount, and a conservative
        # layer none (up to the kernel's albedo cap 1 - 1e-12 times its thickness)
        divergence = out.flux_divergence.values
        assert_non_negative(divergence, "flux_divergence", scale)
        conservative = np.asarray(case.single_scattering_albedo) == 1.0
        allowed = ACCURACY * scale * (1.0 + np.asarray(case.optical_depth)) + TINY
        assert np.all(np.abs(divergence[conservative]) <= allowed[conservative])


@given(case=cases(thermal=False))
def test_reflection_never_exceeds_the_incident_flux(case):
    note(repr(case))
    out = case.solve()
    incident = case.scale()
    margin = ACCURACY * incident + TINY
    assert float(out.flux_up.isel(level=0)) <= incident + margin
    # (inside, flux_down may exceed the incident flux: light trapped between a forward-
    # scattering layer and a bright surface, so only the emergent flux is bounded)


@given(case=cases(thermal=False), other_albedo=unit_interval, view_zenith=view_zenith_lists,
       view_azimuth=view_azimuth_lists)
def test_outputs_do_not_decrease_with_surface_albedo(case, other_albedo, view_zenith,
                                                     view_azimuth):
    note(repr(case))
    low, high = sorted([case.surface_albedo, other_albedo])
    # all Fourier terms (tolerance far below round-off of the sums) so that both runs
    # truncate the azimuth series alike
    options = dict(view_zenith=view_zenith, view_azimuth=view_azimuth, fourier_tolerance=1e-14)
    dark = case.solve(**options, surface_albedo=low)
    bright = case.solve(**options, surface_albedo=high)
    margin = ACCURACY * case.scale() + TINY
    for name in (*FLUX_NAMES, "radiance"):
        step = bright[name].values - dark[name].values
        assert step.min() >= -margin, (
            f"{name} decreases from albedo {low} to {high} by {-step.min():.3e}")


@given(case=cases(thermal=False),
       angles=st.lists(st.floats(0.0, 89.9), min_size=2, max_size=3, unique=True),
       view_azimuth=view_azimuth_lists)
def test_reflection_is_reciprocal(case, angles, view_azimuth):
    # Chandrasekhar 1950 (reciprocity principle): for unit irradiance the reflected radiance
    # divided by mu0 is symmetric in (mu, mu0), at every azimuth
    case = dataclasses.replace(case, sun_irradiance=1.0)
    note(repr(case))
    angles = np.array(angles)
    assume(np.min(np.diff(np.sort(angles))) > 1e-3)
    out = case.solve(sun_zenith=angles, view_zenith=angles, view_azimuth=view_azimuth,
                     fourier_tolerance=1e-14)
    reflected = out.radiance.sel(level=0, direction="up").transpose(
        "sun_zenith", "view_zenith", "view_azimuth").values
    mu0 = np.cos(np.radians(out.sun_zenith.values))
    ratio = reflected / mu0[:, None, None]
    ok, worst = close(ratio, ratio.transpose(1, 0, 2), rtol=1e-6, atol=ACCURACY)
    assert ok, f"reciprocity broken by {worst:.3e}: {ratio}"


@given(case=cases(thermal=False), layer_seed=st.integers(0, 10**6),
       fraction=st.floats(0.01, 0.99), view_zenith=view_zenith_lists,
       view_azimuth=view_azimuth_lists)
# a subnormal irradiance: differences below the smallest normal double are resolution
@example(case=Case([1.0, 0.0, 0.0], [1.0] * 3, [("hg", 0.0)] * 3, streams=2, sun_zenith=0.0,
                   sun_irradiance=2.2250738585e-313, surface_albedo=0.0),
         layer_seed=0, fraction=0.5, view_zenith=[0.0], view_azimuth=[0.0])
def test_splitting_a_layer_changes_nothing(case, layer_seed, fraction, view_zenith,
                                           view_azimuth):
    note(repr(case))
    layer = layer_seed % case.nlayer
    tau = case.optical_depth[layer]
    split = dataclasses.replace(
        case,
        optical_depth=[*case.optical_depth[:layer], fraction * tau, (1 - fraction) * tau,
                       *case.optical_depth[layer + 1:]],
        single_scattering_albedo=[*case.single_scattering_albedo[:layer + 1],
                                  *case.single_scattering_albedo[layer:]],
        phases=[*case.phases[:layer + 1], *case.phases[layer:]],
    )
    # the split point, in the original atmosphere, as a fractional level number: exact
    # when the split thicknesses are those of the fractional position
    positions = np.concatenate([np.arange(layer + 1), [layer + fraction],
                                np.arange(layer + 1, case.nlayer + 1)])
    options = dict(view_zenith=view_zenith, view_azimuth=view_azimuth, fourier_tolerance=1e-14)
    whole = case.solve(output_levels=positions, **options)
    parts = split.solve(**options)
    scale = case.scale()
    for name in (*FLUX_NAMES, "radiance"):
        ok, worst = close(parts[name].values, whole[name].values, rtol=1e-9, atol=ACCURACY * scale)
        assert ok, f"{name} differs by {worst:.3e} after splitting layer {layer}"


@given(case=cases(), where=st.lists(st.integers(0, 50), min_size=1, max_size=4),
       inserted=st.lists(st.tuples(albedo_values, phase_choice), min_size=4, max_size=4),
       view_zenith=view_zenith_lists, view_azimuth=view_azimuth_lists)
def test_zero_thickness_layers_change_nothing(case, where, inserted, view_zenith,
                                              view_azimuth):
    note(repr(case))
    tau, albedo, phases = [], [], []
    temperature = None if case.temperature is None else [case.temperature[0]]
    kept_levels = [0]
    slots = sorted(position % (case.nlayer + 1) for position in where)
    extra = iter(inserted)
    for index in range(case.nlayer + 1):
        for _ in range(slots.count(index)):
            # a zero-thickness layer at the level `index`: both its levels sit there
            new_albedo, new_phase = next(extra)
            tau.append(0.0)
            albedo.append(new_albedo)
            phases.append(new_phase)
            if temperature is not None:
                temperature.append(case.temperature[index])
        if index < case.nlayer:
            tau.append(case.optical_depth[index])
            albedo.append(case.single_scattering_albedo[index])
            phases.append(case.phases[index])
            if temperature is not None:
                temperature.append(case.temperature[index + 1])
            kept_levels.append(len(tau))
    # kept_levels: the padded atmosphere's level at the bottom of each original layer (any
    # level between zero-thickness layers would do: the field is continuous across them)
    padded = dataclasses.replace(case, optical_depth=tau, single_scattering_albedo=albedo,
                                 phases=phases, temperature=temperature)
    options = dict(view_zenith=view_zenith, view_azimuth=view_azimuth, fourier_tolerance=1e-14)
    plain = case.solve(**options)
    more = padded.solve(**options).isel(level=kept_levels)
    scale = case.scale()
    for name in (*FLUX_NAMES, "radiance"):
        ok, worst = close(more[name].values, plain[name].values, rtol=1e-9, atol=ACCURACY * scale)
        assert ok, f"{name} differs by {worst:.3e} with zero-thickness layers at {slots}"


@given(case=cases(thermal=True), temperature=st.floats(1.0, 400.0),
       view_zenith=view_zenith_lists, view_azimuth=view_azimuth_lists)
def test_isothermal_enclosure_is_uniform(case, temperature, view_zenith, view_azimuth):
    # Kirchhoff's law: an isothermal scattering slab over a surface at the same temperature
    # (emissivity 1 - A) under an isotropic sky radiance B(T) is filled with I = B(T)
    planck = float(lamina.planck.band_radiance(temperature, *case.wavenumber_band))
    assume(planck > 1e-250)
    case = dataclasses.replace(case, temperature=[temperature] * (case.nlayer + 1),
                               sun_irradiance=0.0, top_diffuse_radiance=planck)
    note(repr(case))
    out = case.solve(view_zenith=view_zenith, view_azimuth=view_azimuth)
    rtol = 1e-9
    assert np.allclose(out.radiance.values, planck, rtol=rtol, atol=0)
    assert np.allclose(out.mean_intensity.values, planck, rtol=rtol, atol=0)
    for name in ("flux_up", "flux_down"):
        assert np.allclose(out[name].values, np.pi * planck, rtol=rtol, atol=0), name
    assert np.allclose(out.flux_divergence.values, 0.0, atol=rtol * np.pi * planck)
