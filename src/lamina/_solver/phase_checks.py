"""Warn step: phase functions that the solver can take but whose results would mislead.

Two cases, both valid input that gives unphysical radiances:

* moments of a forward-peaked phase function cut off too early: the Legendre series is then
  negative at some scattering angles, and the single-scattering correction, which uses the
  series as given, gives negative radiances there;
* moments that stop before chi_M, the one delta-M scaling with M streams needs (Wiscombe
  1977): the layer is then not scaled (f = 0) and its forward peak, which M streams cannot
  carry, makes the discrete-ordinates radiances ring.

Each warning is a :class:`lamina.LaminaWarning` naming the layer and what to do. A valid,
non-negative phase function never warns.
"""

from __future__ import annotations

import functools
import warnings

import numpy as np

from lamina import phase
from lamina._checks import LaminaWarning
from lamina._solver.common import Block, BlockSettings

#: Scattering angles (degrees) at which a phase function is checked for negative values.
CHECK_ANGLES = np.linspace(0.0, 180.0, 721)
#: A phase function (normalised to a mean of 1 over the sphere) more negative than this is
#: reported; round-off in moments computed elsewhere stays far below it.
NEGATIVE_TOLERANCE = 1e-6


def warn_about_phase_functions(block: Block, settings: BlockSettings) -> None:
    """Warn (with the first layer concerned) about the two cases of the module docstring.

    Both show as a Legendre series that is negative somewhere: a series that ends early
    because the phase function is smooth (Rayleigh's three moments) is positive and
    complete, and needs no delta-M scaling.
    """
    moments = block.phase_moments
    short = settings.delta_m and moments.shape[-1] <= settings.streams
    corrected = settings.single_scattering_correction and settings.views.wanted
    if not (short or corrected) or moments.shape[-1] < 2:
        return
    scatters = (block.single_scattering_albedo > 0.0) & (block.optical_depth > 0.0)
    found = _most_negative(moments, scatters)
    if found is None:
        return
    layer, value, angle = found
    if short:
        warnings.warn(
            f"phase_moments of layer {layer} stop at chi_{moments.shape[-1] - 1}, before "
            f"chi_{settings.streams}, which delta-M scaling with {settings.streams} streams "
            f"needs, and their series is negative ({value:.3g} at {angle:g} degrees): a "
            "forward peak cut off. That layer is not scaled and its radiances can go "
            f"negative. Give at least {settings.streams + 1} moments (or fewer streams)",
            LaminaWarning, stacklevel=2)
    else:
        warnings.warn(
            f"phase_moments of layer {layer} give a phase function that is negative at some "
            f"scattering angles ({value:.3g} at {angle:g} degrees): too few moments of a "
            "forward-peaked phase function, and the single-scattering correction then gives "
            "negative radiances there. Give more moments (or the exact phase function "
            "through lamina.phase.from_tabulated)", LaminaWarning, stacklevel=2)


@functools.lru_cache(maxsize=8)
def _weighted_table(terms: int) -> np.ndarray:
    """(2l + 1) P_l at CHECK_ANGLES, (moment, angle): the same for every call (read-only)."""
    degree = np.arange(terms)
    table = phase.legendre_polynomials(np.cos(np.radians(CHECK_ANGLES)), terms)
    weighted = (2.0 * degree + 1.0)[:, None] * table.T
    weighted.flags.writeable = False
    return weighted


#: Values of the series (rows x CHECK_ANGLES) computed at a time: bounds the check's
#: temporaries (a 60,000-column block with radiances once peaked at 12x its moments here).
_SLAB_VALUES = 1 << 21


def _most_negative(moments: np.ndarray, scatters: np.ndarray) -> tuple[int, float, float] | None:
    """(layer, value, angle) of the most negative scattering layer's series, or None.

    Columns are looked at a slab at a time; on a tie between slabs the first is kept.
    """
    table = _weighted_table(moments.shape[-1])
    step = max(1, _SLAB_VALUES // (max(1, moments.shape[1]) * CHECK_ANGLES.size))
    best = None
    for start in range(0, moments.shape[0], step):
        chosen = scatters[start:start + step]
        rows = moments[start:start + step][chosen]
        if rows.shape[0] == 0:
            continue
        unique, index = np.unique(rows, axis=0, return_index=True)
        values = unique @ table
        worst = np.unravel_index(np.argmin(values), values.shape)
        if best is None or values[worst] < best[1]:
            layer = int(np.argwhere(chosen)[index[worst[0]]][1])
            best = (layer, float(values[worst]), float(CHECK_ANGLES[worst[1]]))
    if best is None or best[1] >= -NEGATIVE_TOLERANCE:
        return None
    return best
