"""The validation report: a markdown file with one figure per case.

:func:`write_report` writes ``report.md`` (any name) and a ``figures/`` folder beside it:
for each case, reference and lamina curves side by side with their error, and, where the
case has one, its error against the number of streams. Figures use matplotlib's object
interface with the Agg renderer (no screen, no pyplot state).
"""

from __future__ import annotations

import datetime as _datetime
import os
from collections.abc import Sequence
from pathlib import Path

import numpy as np

from lamina.validation.suite import CaseResult

__all__ = ["write_report"]

_FIGURES = "figures"

_NOTES = """\
## Notes on the references

- **Scalar against polarized Rayleigh scattering.** The published Rayleigh tables for
  planetary atmospheres (Chandrasekhar's and their successors) are computed with
  polarization. A scalar solver such as lamina (which carries intensity only) differs from
  their intensities by up to several percent, most near the limb and for conservative
  scattering. The Rayleigh cases here therefore compare lamina only with scalar-exact
  methods written in `lamina.validation.references`: Ambartsumian's nonlinear equation per
  Fourier term for the semi-infinite medium and adding-doubling for finite layers. The
  comparison with polarized tables waits for lamina to gain polarization.
- **Scalar Rayleigh geometric albedo.** The project's reference list quotes 0.7977 for the
  geometric albedo of a semi-infinite conservative Rayleigh atmosphere (Prather 1974;
  Dlugach and Yanovitskij 1974, from memory). Two independent scalar methods (Ambartsumian's
  equation and thick-layer doubling) give 0.75176, and lamina agrees with them
  (`rayleigh_geometric_albedo`). 0.7977 is most likely the polarized value; it is not
  tested.
- **H(0.5) for w = 1.** The reference list recalls H(0.5) = 2.01276 from Chandrasekhar's
  table; both the exact integral representation of H and its integral equation give
  2.012779 (so the table should read 2.01278). The cases use the computed H.
- **Values from memory.** 0.710446 (Hopf's constant), 0.3439 (1/H(1)) and 0.6897 (the
  isotropic geometric albedo) were recalled rather than read; their tolerances are half a
  unit in their last decimal (1e-4 for 0.6897). Hopf's constant also follows from the
  reference H-function's moments (alpha_2 / alpha_1 = 0.7104461).
- **Conservative scattering.** The solver caps the single-scattering albedo at 1 - 1e-12.
  This costs about 1e-12 x (optical thickness) of the energy (below 1e-8 up to t = 1000)
  and lowers the reflection of a semi-infinite conservative medium by about
  H(mu) sqrt(1e-12), ~3e-6, the floor visible in the conservative semi-infinite cases.
- **Sun near the horizon.** When mu0 falls below the smallest quadrature cosine the plane
  albedo loses accuracy: for the isotropic semi-infinite medium (w = 0.5) at 32 streams the
  error is 8e-8 at a sun zenith of 85 deg, 1e-5 at 89 deg and 3.5e-4 at 89.9 deg (64
  streams: 3.5e-9 at 89 deg, 2.6e-5 at 89.9 deg). The spherical-albedo figure shows it;
  the spherical albedo, which weights the plane albedo by mu0, is unaffected (1.5e-8).
- **Errors.** "rel" is max |lamina / reference - 1| over every compared value, "abs" is
  max |lamina - reference| (used against rounded published numbers). Each case states why
  its tolerance is what it is.
"""


def _settings_text(settings: dict) -> str:
    if not settings:
        return "no solver call"
    return ", ".join(f"{key}={value!r}" for key, value in settings.items())


def _number(value: float) -> str:
    return "failed" if not np.isfinite(value) else f"{value:.2e}"


def _figure(result: CaseResult, path: Path) -> bool:
    """Draw the case's figure into ``path``; False when there is nothing to draw."""
    if not result.curves:
        return False
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    panels = 3 if result.study_errors else 2
    figure = Figure(figsize=(4.2 * panels, 3.6), layout="constrained")
    FigureCanvasAgg(figure)
    axes = figure.subplots(1, panels, squeeze=False)[0]
    colours = [f"C{i % 10}" for i in range(len(result.curves))]
    relative = result.error_kind == "relative"
    for curve, colour in zip(result.curves, colours, strict=True):
        order = np.argsort(curve.x, kind="stable")
        x = np.asarray(curve.x, dtype=float)[order]
        reference = np.asarray(curve.reference, dtype=float)[order]
        computed = np.asarray(curve.computed, dtype=float)[order]
        # "+" marks keep isolated reference points (between gaps) visible
        axes[0].plot(x, reference, "-+", color=colour, linewidth=1.2, markersize=5,
                     label=curve.label)
        axes[0].plot(x, computed, "o", color=colour, markersize=3.5, fillstyle="none")
        known = np.isfinite(reference)
        if not np.any(known):
            continue
        with np.errstate(divide="ignore", invalid="ignore"):
            if relative:
                error = np.abs(computed[known] / reference[known] - 1.0)
            else:
                error = np.abs(computed[known] - reference[known])
        axes[1].semilogy(x[known], np.maximum(error, 1e-17), "o-", color=colour,
                         markersize=3, linewidth=0.8)
    # abscissae spanning decades (optical thickness, temperature) read better on a log axis
    every_x = np.concatenate([np.asarray(curve.x, dtype=float) for curve in result.curves])
    if np.all(every_x > 0) and every_x.max() >= 100 * every_x.min():
        axes[0].set_xscale("log")
        axes[1].set_xscale("log")
    axes[0].set_xlabel(result.x_label)
    axes[0].set_ylabel(result.y_label)
    axes[0].set_title("reference (lines, +), lamina (circles)", fontsize=9)
    axes[0].legend(fontsize=7, frameon=False)
    axes[1].set_xlabel(result.x_label)
    axes[1].set_ylabel(f"{result.error_kind} error")
    if result.curves_compared:
        axes[1].axhline(result.tolerance, color="0.4", linestyle="--", linewidth=0.8)
        axes[1].set_title(f"error at {_settings_text(result.settings)}"[:60], fontsize=9)
    else:
        # these curves are an ingredient, not the compared quantity: no tolerance line
        axes[1].set_title("error of the curves (not the compared quantity)", fontsize=9)
    if result.study_errors:
        streams = np.array(result.study_streams)
        errors = np.maximum(np.array(result.study_errors), 1e-17)
        axes[2].loglog(streams, errors, "o-", color="k", markersize=4, linewidth=1)
        axes[2].axhline(result.tolerance, color="0.4", linestyle="--", linewidth=0.8,
                        label="tolerance")
        axes[2].set_xticks(streams, [str(s) for s in streams])
        axes[2].minorticks_off()
        axes[2].set_xlabel("streams")
        axes[2].set_ylabel(f"max {result.error_kind} error")
        axes[2].set_title("error against the number of streams", fontsize=9)
        axes[2].legend(fontsize=7, frameon=False)
    for ax in axes:
        ax.grid(True, color="0.9", linewidth=0.6)
    figure.suptitle(result.title, fontsize=10)
    figure.savefig(path, dpi=90, format="png")
    return True


def _escape(text: str) -> str:
    return text.replace("|", "\\|")


def write_report(results: Sequence[CaseResult], path: str | os.PathLike[str]) -> Path:
    """Write the validation report as markdown, with its figures in ``figures/`` beside it.

    Parameters
    ----------
    results : sequence of CaseResult
        From :func:`lamina.validation.run_suite`.
    path : path
        The markdown file to write (its folder must exist). Figures go to
        ``<folder>/figures/<case>.png``, replacing older ones of the same name.

    Returns
    -------
    pathlib.Path
        The path of the report.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from lamina.validation import run_suite, write_report
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> write_report(run_suite(["planck_total_radiance"]), folder / "report.md").name
    'report.md'
    """
    path = Path(path)
    if not path.parent.is_dir():
        raise ValueError(f"path must be in an existing folder; {path.parent} does not exist")
    figures = path.parent / _FIGURES
    figures.mkdir(exist_ok=True)
    from lamina import __version__

    passed = sum(result.passed for result in results)
    total_time = sum(result.elapsed for result in results)
    now = _datetime.datetime.now(_datetime.UTC).strftime("%Y-%m-%d %H:%M UTC")
    lines = [
        "# lamina validation report",
        "",
        f"lamina {__version__}, {now}. **{passed} of {len(results)} cases passed.** "
        f"The cases took {total_time:.0f} s of wall time (for information; nothing checks "
        "it).",
        "",
        "Regenerate with `lamina validate --report validation/report.md`, or",
        "`python -c \"from lamina.validation import run_suite, write_report; "
        "write_report(run_suite(), 'validation/report.md')\"`.",
        "",
        "Each case compares lamina with a published value, an exact formula evaluated with "
        "numpy/scipy, or an independent scalar-exact method in "
        "`lamina.validation.references` (adding-doubling, Ambartsumian's equation), none of "
        "which shares code with the solver.",
        "",
        "## Summary",
        "",
        "| case | source | quantity | error | kind | tolerance | settings | result |",
        "|---|---|---|---|---|---|---|---|",
    ]
    for result in results:
        lines.append(
            f"| [{result.name}](#{result.name.replace('_', '-')}) | {_escape(result.source)} "
            f"| {_escape(result.quantity)} | {_number(result.max_error)} "
            f"| {'rel' if result.error_kind == 'relative' else 'abs'} "
            f"| {result.tolerance:.1e} | {_escape(_settings_text(result.settings))} "
            f"| {'pass' if result.passed else '**FAIL**'} |"
        )
    lines += ["", _NOTES, "## Cases", ""]
    for result in results:
        lines += [
            f"### {result.name.replace('_', '-')}",
            "",
            f"**{result.title}** ({result.name}). {_escape(result.details)}",
            "",
            f"- Source: {result.source}",
            f"- Quantity: {result.quantity}; {result.error_kind} error "
            f"{_number(result.max_error)}, tolerance {result.tolerance:.1e}: "
            f"**{'pass' if result.passed else 'FAIL'}**",
            f"- Tolerance: {result.tolerance_note}",
            f"- Setup: {result.setup}",
            f"- lamina settings: `{_settings_text(result.settings)}`",
            f"- Time: {result.elapsed:.1f} s",
        ]
        if 0 < result.reference.size <= 6:
            lines.append(
                "- Values: reference " + ", ".join(f"{v:.7g}" for v in result.reference)
                + "; lamina " + ", ".join(f"{v:.7g}" for v in result.computed)
            )
        if result.failure:
            lines.append(f"- Failure: {result.failure}")
        if result.study_errors:
            lines += [
                "",
                "| streams | " + " | ".join(str(s) for s in result.study_streams) + " |",
                "|---|" + "---|" * len(result.study_streams),
                "| error | " + " | ".join(_number(e) for e in result.study_errors) + " |",
            ]
        if _figure(result, figures / f"{result.name}.png"):
            caption = ("Left: reference (lines) and lamina (circles); middle: their "
                       f"{result.error_kind} error")
            if not result.curves_compared:
                caption += (f" (the curves show {result.y_label} behind the compared "
                            f"{result.quantity}, so no tolerance line)")
            if result.study_errors:
                caption += "; right: the case's error against the number of streams"
            lines += ["", f"![{result.name}]({_FIGURES}/{result.name}.png)", "",
                      f"*{caption}.*"]
        lines.append("")
    path.write_text("\n".join(lines), encoding="utf-8")
    return path
