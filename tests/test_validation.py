"""The validation suite: a fast subset of its cases, and its API (table, report, errors).

Each case compares lamina with a published value, an exact formula or an independent
scalar-exact method and names its source in ``lamina.validation.cases``; here the fast cases
must pass their own tolerances. The full suite runs with ``lamina validate``.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from lamina.validation import (
    CaseResult,
    SuiteResult,
    format_table,
    list_cases,
    run_suite,
    write_report,
)
from lamina.validation import suite as suite_module
from lamina.validation.cases import CASES, Case, Comparison, Curve

FAST = [case.name for case in CASES if "fast" in case.tags]


@pytest.mark.parametrize("name", FAST)
def test_fast_case_passes(name):
    (result,) = run_suite([name], streams_study=False)
    assert result.failure is None, result.failure
    assert result.max_error <= result.tolerance, (result.max_error, result.tolerance)
    assert result.passed


def test_streams_study_error_falls():
    # Hopf's constant (Hopf 1934) from the Milne problem: the error must fall from 4 to 32
    # streams (at 64 it sits at the rounding of the published 0.710446)
    (result,) = run_suite(["milne_hopf_constant"])
    assert result.study_streams == (4, 8, 16, 32, 64)
    errors = np.array(result.study_errors)
    assert np.all(np.diff(errors[:4]) < 0)
    assert errors[3] <= result.tolerance


def test_case_list_is_complete_and_described():
    names = list_cases()
    assert len(names) >= 20
    assert len(set(names)) == len(names)
    assert names == [case.name for case in CASES]
    for case in CASES:
        assert case.source and case.quantity and case.details and case.tolerance_note
        assert case.error_kind in ("relative", "absolute")
        assert case.tolerance > 0
        assert set(case.settings) <= {"streams", "delta_m", "single_scattering_correction",
                                      "fourier_tolerance"}
    # the published values recalled rather than read say so
    recalled = [case.name for case in CASES if "from memory" in case.source]
    assert {"milne_hopf_constant", "grey_limb_darkening_ratio",
            "isotropic_geometric_albedo"} <= set(recalled)


def test_unknown_case_name_is_named():
    with pytest.raises(ValueError, match="unknown validation case 'no_such_case'"):
        run_suite(["planck_total_radiance", "no_such_case"])


def test_names_and_cases_are_alternatives():
    results = run_suite(cases=["planck_total_radiance"])
    assert [r.name for r in results] == ["planck_total_radiance"]
    assert run_suite("planck_total_radiance")[0].name == "planck_total_radiance"
    with pytest.raises(ValueError, match="not both"):
        run_suite(["planck_total_radiance"], cases=["planck_total_radiance"])


def _result(**change) -> CaseResult:
    base = CaseResult(
        name="demo_case", title="A demo", source="Somebody 1950, table 1", details="...",
        quantity="radiance", error_kind="relative", max_error=2e-6, tolerance=1e-5,
        tolerance_note="why", passed=True, settings={"streams": 16}, setup="one layer",
        curves=(Curve("c", np.array([0.0, 1.0]), np.array([1.0, 2.0]),
                      np.array([1.0, 2.000004])),),
        x_label="x", y_label="y", study_streams=(4, 8), study_errors=(1e-3, 1e-5),
        elapsed=0.1,
    )
    return dataclasses.replace(base, **change)


def test_table_lists_every_case_and_the_failures():
    good = _result()
    bad = _result(name="broken_case", max_error=float("inf"), passed=False,
                  failure="RuntimeError: boom", error_kind="absolute")
    table = format_table([good, bad])
    lines = table.splitlines()
    assert lines[0].split() == ["case", "source", "error", "kind", "tolerance", "result"]
    assert "demo_case" in table and "2.00e-06" in table and "pass" in table
    assert "broken_case" in table and "FAIL" in table and "abs" in table
    assert "1 of 2 cases passed" in table
    assert "broken_case: RuntimeError: boom" in table


def test_suite_result_passes_only_when_every_case_does():
    assert SuiteResult([_result(), _result()]).passed
    assert not SuiteResult([_result(), _result(passed=False)]).passed
    assert not SuiteResult([]).passed
    assert [r.name for r in SuiteResult([_result(passed=False)]).failed] == ["demo_case"]
    assert _result().max_relative_error == 2e-6


def test_report_is_written_with_figures(tmp_path):
    results = run_suite(["milne_hopf_constant", "planck_total_radiance"])
    path = write_report(results, tmp_path / "report.md")
    text = path.read_text()
    assert "| [milne_hopf_constant]" in text and "| pass |" in text
    assert "Hopf 1934" in text
    assert "![milne_hopf_constant](figures/milne_hopf_constant.png)" in text
    assert "polarization" in text and "0.7977" in text   # the notes on the references
    for name in ("milne_hopf_constant", "planck_total_radiance"):
        png = tmp_path / "figures" / f"{name}.png"
        assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_report_of_a_failed_case_and_through_run_suite(tmp_path):
    bad = _result(name="broken_case", max_error=float("inf"), passed=False, curves=(),
                  failure="RuntimeError: boom")
    text = write_report([bad], tmp_path / "r.md").read_text()
    assert "**FAIL**" in text and "RuntimeError: boom" in text
    assert not (tmp_path / "figures" / "broken_case.png").exists()
    run_suite(["planck_total_radiance"], report=tmp_path / "via_suite.md")
    assert (tmp_path / "via_suite.md").exists()


def test_report_needs_an_existing_folder(tmp_path):
    with pytest.raises(ValueError, match="existing folder"):
        write_report([_result()], tmp_path / "missing" / "report.md")


def _case(compare, **change) -> Case:
    base = Case(name="fake", title="fake", source="none", details="", quantity="q",
                error_kind="relative", tolerance=1e-3, tolerance_note="", setup="",
                settings={"streams": 8}, compare=compare)
    return dataclasses.replace(base, **change)


def test_a_case_that_raises_is_a_recorded_failure():
    def compare(settings):
        raise RuntimeError("the solver failed")

    result = suite_module._run_case(_case(compare), streams_study=True)
    assert not result.passed
    assert result.failure == "RuntimeError: the solver failed"
    assert result.max_error == float("inf")


def test_convergence_cases_must_shrink_with_streams():
    def compare(settings):
        # an error that grows with the number of streams
        error = 1e-6 * settings["streams"]
        return Comparison(np.ones(2), np.full(2, 1.0 + error), (), "x", "y")

    growing = suite_module._run_case(
        _case(compare, study_streams=(4, 8, 16), must_converge=True), streams_study=False)
    assert growing.study_errors and not growing.passed
    assert "did not shrink" in growing.failure
    plain = suite_module._run_case(_case(compare, study_streams=(4, 8, 16)),
                                   streams_study=False)
    assert plain.passed and plain.study_errors == ()


def test_non_finite_values_fail_the_case():
    def compare(settings):
        return Comparison(np.ones(2), np.array([1.0, np.nan]), (), "x", "y")

    result = suite_module._run_case(_case(compare), streams_study=False)
    assert not result.passed and result.max_error == float("inf")


def test_validate_command_runs_a_case(tmp_path, capsys):
    from lamina import cli

    assert cli.main(["validate", "--case", "planck_total_radiance",
                     "--report", str(tmp_path / "report.md")]) == 0
    assert (tmp_path / "report.md").exists()
    assert cli.main(["validate", "--case", "no_such_case"]) == 2
    assert "no_such_case" in capsys.readouterr().err
