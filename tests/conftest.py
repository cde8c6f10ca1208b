"""Hypothesis profiles for the whole suite.

``ci`` (the default) keeps the fuzz tests of ``test_fuzz.py`` to a few thousand cases in all,
about three minutes on two cores. ``long`` runs ten times as many, for a local soak:
``LIMBCHART_HYPOTHESIS_PROFILE=long python -m pytest tests/test_fuzz.py`` or
``python -m pytest tests/test_fuzz.py --hypothesis-profile=long``.

A fuzz test asks for ``cases(share)``: its share of the profile's ``max_examples``.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import warnings
from collections.abc import Iterator
from datetime import timedelta
from pathlib import Path

import pytest
from hypothesis import HealthCheck, settings

PROFILE_VARIABLE = "LIMBCHART_HYPOTHESIS_PROFILE"

_COMMON = settings(
    # A case slower than this is a defect (a study is drawn in tens of milliseconds); the fuzz
    # tests also stop a case that hangs outright with an alarm (test_fuzz.CASE_SECONDS).
    deadline=timedelta(seconds=10),
    print_blob=True,  # a failure prints the line that replays it with @reproduce_failure
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)

settings.register_profile("ci", _COMMON, max_examples=100)
settings.register_profile("long", _COMMON, max_examples=1000)
settings.load_profile(os.environ.get(PROFILE_VARIABLE, "ci"))


@pytest.hookimpl(hookwrapper=True, tryfirst=True)
def pytest_runtest_makereport(item: pytest.Item, call: pytest.CallInfo[None]) -> Iterator[None]:
    """Let hypothesis report a failing case under filterwarnings=error.

    For a failure hypothesis writes a patch with libcst, whose import warns (DeprecationWarning
    raised in mypy_extensions, attributed to libcst); as an error that turns the report into an
    INTERNALERROR that hides the case. Import it quietly first, and only when a case failed.
    """
    if getattr(item, "_hypothesis_failing_examples", None):
        with warnings.catch_warnings(), contextlib.suppress(ImportError):
            warnings.simplefilter("ignore", DeprecationWarning)
            import hypothesis.extra._patching  # noqa: F401
    yield


@pytest.fixture()
def inputs(tmp_path: Path) -> Path:
    """A batch folder: three examples that draw and one study that fails (an unknown segment)."""
    folder = tmp_path / "in"
    folder.mkdir()
    examples = Path(__file__).resolve().parents[1] / "examples"
    for name in ("claudicant-sfa.yaml", "multilevel-occlusion.yaml", "normal.yaml"):
        shutil.copy(examples / name, folder / name)
    (folder / "zz-broken.yaml").write_text(
        "format: 1\nlimbs: {left: {segments: {SFA-X: {psv: 9}}}}\n"
    )
    return folder
