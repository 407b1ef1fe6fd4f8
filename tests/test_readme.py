"""The README's first example prints what the README says it prints."""

from __future__ import annotations

import contextlib
import io
import re
from pathlib import Path

import pytest

README = Path(__file__).resolve().parents[1] / "README.md"


def test_first_example_output_matches_the_readme():
    if not README.exists():   # an installed copy of the tests without the repository
        pytest.fail(f"README.md not found beside the tests at {README}")
    text = README.read_text()
    match = re.search(r"```python\n(.*?)```\n\nprints\n\n```\n(.*?)```", text, re.S)
    assert match, "the README's first example and its printed output were not found"
    code, expected = match.groups()
    printed = io.StringIO()
    with contextlib.redirect_stdout(printed):
        exec(compile(code, "README.md", "exec"), {})
    assert printed.getvalue() == expected
