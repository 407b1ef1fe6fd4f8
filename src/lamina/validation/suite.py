"""Run the validation cases and tabulate their results.

:func:`run_suite` runs every case of :mod:`lamina.validation.cases` (or the named ones),
measures each case's largest error against its reference, optionally the error against the
number of streams, and returns a :class:`SuiteResult`: a list of :class:`CaseResult` with a
``passed`` flag for the whole. :func:`format_table` turns the results into a plain-text
table; :func:`lamina.validation.report.write_report` into a markdown report with figures.
"""

from __future__ import annotations

import os
import time
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from lamina.validation.cases import CASES, Case, Comparison, Curve

__all__ = ["CaseResult", "SuiteResult", "format_table", "list_cases", "run_suite"]

_BY_NAME = {case.name: case for case in CASES}


@dataclass(frozen=True)
class CaseResult:
    """The outcome of one validation case.

    Attributes
    ----------
    name, title, source, details, quantity : str
        From the case: its name, a one-line title, the published source (short and
        detailed) and the quantity compared.
    error_kind : str
        ``"relative"`` (``max |lamina / reference - 1|``) or ``"absolute"``
        (``max |lamina - reference|``, used where the reference is a rounded published number
        of known decimals).
    max_error : float
        The largest error of that kind over every compared value (``inf`` if the case
        could not run).
    tolerance : float
        The bound ``max_error`` must not exceed; ``tolerance_note`` says why it is what
        it is.
    passed : bool
        ``max_error <= tolerance``, the case ran, and for convergence cases the error
        shrank at every step of the streams study.
    settings : dict
        Keyword arguments handed to :func:`lamina.solve` (empty for cases without a solver
        call); ``setup`` describes the atmosphere and geometry in words.
    curves : tuple of Curve
        Reference and lamina values along an abscissa (``x_label``, ``y_label``), for the
        figures; ``curves_compared`` is False when they show an ingredient of the compared
        quantity rather than the quantity itself.
    study_streams, study_errors : tuple
        Error of the case against the number of streams (empty without a study).
    elapsed : float
        Wall time of the case in seconds (for the report; nothing checks it).
    failure : str or None
        Why the case failed to run, if it did.
    reference, computed : numpy.ndarray
        Every compared value: the reference's and lamina's (1-D, same length).
    """

    name: str
    title: str
    source: str
    details: str
    quantity: str
    error_kind: str
    max_error: float
    tolerance: float
    tolerance_note: str
    passed: bool
    settings: dict[str, Any]
    setup: str
    curves: tuple[Curve, ...]
    x_label: str
    y_label: str
    study_streams: tuple[int, ...]
    study_errors: tuple[float, ...]
    elapsed: float
    failure: str | None = None
    curves_compared: bool = True
    reference: np.ndarray = field(default_factory=lambda: np.zeros(0))
    computed: np.ndarray = field(default_factory=lambda: np.zeros(0))

    @property
    def max_relative_error(self) -> float:
        """``max_error`` (relative or absolute as ``error_kind`` says)."""
        return self.max_error


class SuiteResult(list):
    """A list of :class:`CaseResult` whose ``passed`` is True when every case passed."""

    @property
    def passed(self) -> bool:
        """True when every case passed (and at least one ran)."""
        return bool(self) and all(result.passed for result in self)

    @property
    def failed(self) -> list[CaseResult]:
        """The cases that did not pass."""
        return [result for result in self if not result.passed]


def list_cases() -> list[str]:
    """Names of the validation cases, in the order the suite runs them.

    Examples
    --------
    >>> from lamina.validation import list_cases
    >>> "milne_hopf_constant" in list_cases()
    True
    """
    return [case.name for case in CASES]


def _error(comparison: Comparison, kind: str) -> float:
    reference, computed = comparison.reference, comparison.computed
    if not (np.all(np.isfinite(reference)) and np.all(np.isfinite(computed))):
        return float("inf")
    if kind == "absolute":
        return float(np.max(np.abs(computed - reference)))
    if np.any(reference == 0.0):
        raise ValueError("a relative error needs non-zero reference values")
    return float(np.max(np.abs(computed / reference - 1.0)))


def _select(names: Iterable[str] | None) -> list[Case]:
    if names is None:
        return list(CASES)
    if isinstance(names, str):
        names = [names]
    chosen = list(names)
    unknown = [name for name in chosen if name not in _BY_NAME]
    if unknown:
        raise ValueError(
            f"unknown validation case {', '.join(repr(n) for n in unknown)}; known cases: "
            f"{', '.join(_BY_NAME)}"
        )
    return [_BY_NAME[name] for name in dict.fromkeys(chosen)]


def _run_case(case: Case, streams_study: bool) -> CaseResult:
    start = time.perf_counter()
    settings = dict(case.settings)
    study_streams: tuple[int, ...] = ()
    study_errors: tuple[float, ...] = ()
    failure = None
    comparison = None
    try:
        comparison = case.compare(dict(settings))
        max_error = _error(comparison, case.error_kind)
        # a convergence case is checked by its study, so it always runs
        if case.study_streams and (streams_study or case.must_converge):
            study_streams = case.study_streams
            study_errors = tuple(
                _error(case.compare({**settings, "streams": streams}), case.error_kind)
                for streams in study_streams
            )
    except Exception as error:  # one failing case must not stop the suite: report it
        failure = f"{type(error).__name__}: {error}"
        max_error = float("inf")
    passed = failure is None and max_error <= case.tolerance
    if passed and case.must_converge:
        shrinking = all(b < a for a, b in zip(study_errors, study_errors[1:], strict=False))
        if not shrinking:
            passed = False
            failure = "the error did not shrink at every step of the streams study"
    return CaseResult(
        name=case.name, title=case.title, source=case.source, details=case.details,
        quantity=case.quantity, error_kind=case.error_kind, max_error=max_error,
        tolerance=case.tolerance, tolerance_note=case.tolerance_note, passed=passed,
        settings=settings, setup=case.setup,
        curves=comparison.curves if comparison is not None else (),
        x_label=comparison.x_label if comparison is not None else "",
        y_label=comparison.y_label if comparison is not None else "",
        study_streams=study_streams, study_errors=study_errors,
        elapsed=time.perf_counter() - start, failure=failure,
        curves_compared=comparison.curves_compared if comparison is not None else True,
        reference=comparison.reference if comparison is not None else np.zeros(0),
        computed=comparison.computed if comparison is not None else np.zeros(0),
    )


def run_suite(
    names: Sequence[str] | str | None = None,
    report: str | os.PathLike[str] | None = None,
    streams_study: bool = True,
    *,
    cases: Sequence[str] | str | None = None,
) -> SuiteResult:
    """Run validation cases and return their results.

    Parameters
    ----------
    names : sequence of str, optional
        Case names to run (see :func:`list_cases`); all cases by default.
    report : path, optional
        Also write the markdown report with its figures there (see
        :func:`lamina.validation.write_report`).
    streams_study : bool
        Also compute each case's error against the number of streams (4 to 64) for the
        report's figures. Convergence cases (delta-M) run their study regardless, since it
        is part of their check.
    cases : sequence of str, optional
        Same as ``names`` (the keyword the ``lamina validate`` command uses); give one or
        the other.

    Returns
    -------
    SuiteResult
        A list of :class:`CaseResult` in the order of :func:`list_cases`; its ``passed``
        attribute is True when every case passed.

    Raises
    ------
    ValueError
        For an unknown case name (the message names it and lists the known ones), or
        when both ``names`` and ``cases`` are given.

    Examples
    --------
    >>> from lamina.validation import run_suite
    >>> results = run_suite(["isothermal_enclosure"], streams_study=False)
    >>> results.passed
    True
    """
    if names is not None and cases is not None:
        raise ValueError("give the case names as names or as cases, not both")
    selected = _select(names if names is not None else cases)
    results = SuiteResult(_run_case(case, streams_study) for case in selected)
    if report is not None:
        from lamina.validation.report import write_report

        write_report(results, report)
    return results


def _format_number(value: float) -> str:
    return "failed" if not np.isfinite(value) else f"{value:.2e}"


def format_table(results: Sequence[CaseResult]) -> str:
    """A plain-text table of results: case, source, error (and its kind), tolerance, result.

    Examples
    --------
    >>> from lamina.validation import format_table, run_suite
    >>> print(format_table(run_suite(["planck_total_radiance"])).splitlines()[0].split())
    ['case', 'source', 'error', 'kind', 'tolerance', 'result']
    """
    header = ("case", "source", "error", "kind", "tolerance", "result")
    rows = [
        (
            result.name,
            _shorten(result.source, 58),
            _format_number(result.max_error),
            "rel" if result.error_kind == "relative" else "abs",
            f"{result.tolerance:.1e}",
            "pass" if result.passed else "FAIL",
        )
        for result in results
    ]
    widths = [max(len(str(row[i])) for row in [header, *rows]) for i in range(len(header))]
    lines = ["  ".join(cell.ljust(width) for cell, width in zip(row, widths, strict=True))
             .rstrip() for row in [header, *rows]]
    lines.insert(1, "  ".join("-" * width for width in widths))
    passed = sum(result.passed for result in results)
    lines.append(f"{passed} of {len(results)} cases passed")
    for result in results:
        if result.failure:
            lines.append(f"{result.name}: {result.failure}")
    return "\n".join(lines)


def _shorten(text: str, width: int) -> str:
    return text if len(text) <= width else text[: width - 3].rstrip() + "..."
