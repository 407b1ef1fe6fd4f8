"""Independent reference solutions and the validation suite of lamina.

:mod:`lamina.validation.references` holds published exact results (Chandrasekhar's
H-functions, the isothermal slab) and independent methods (Ambartsumian's nonlinear
integral equation, adding-doubling) written from the published mathematics with numpy
and scipy only. Nothing there calls lamina's own solver.

The suite compares lamina with those references and with published values:

* :func:`run_suite` runs the cases (all, or the named ones) and returns their results;
* :func:`format_table` prints them as a table (case, source, error, tolerance, result);
* :func:`write_report` writes a markdown report with a figure per case;
* :func:`list_cases` names the cases. ``lamina validate`` on the command line does the same.

Adding a case: write a function ``compare(settings) -> Comparison`` in the topic module of
:mod:`lamina.validation.cases` it belongs to (``isotropic``, ``thermal``, ``scattering``,
``layers``; a new module for a new topic, importing only from ``cases._common``) that calls
:func:`lamina.solve` with ``**settings`` and returns the reference values beside lamina's
(plus curves for the figure), and register it in ``CASES`` (``cases/__init__.py``) with its
name, source (paper and table or equation, "from memory" where the value was recalled),
quantity, error kind, tolerance and the reason for it, and settings.
Give it ``study_streams`` if its error should fall as streams are added.

Examples
--------
>>> from lamina.validation import run_suite, format_table
>>> results = run_suite(["isothermal_enclosure", "planck_total_radiance"])
>>> results.passed
True
"""

from __future__ import annotations

from lamina.validation.report import write_report
from lamina.validation.suite import (
    CaseResult,
    SuiteResult,
    format_table,
    list_cases,
    run_suite,
)

__all__ = [
    "CaseResult",
    "SuiteResult",
    "format_table",
    "list_cases",
    "run_suite",
    "write_report",
]
