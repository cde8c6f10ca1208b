"""Write examples/sr/bilateral.dcm: a fictional vascular ultrasound structured report.

Built with the same builder the tests use (tests/sr_build.py, PS3.16 TID 5100); its hand-typed
twin is examples/sr/bilateral.yaml. Run from the repository root:
``python tools/make_example_sr.py``.
"""

from __future__ import annotations

import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "tests"))

import sr_build as b  # noqa: E402

HEADER = b.Header(
    patient_name="Example^Robin",
    patient_id="DEMO-0808",
    birth_date="19570412",
    sex="O",
    study_date="20261203",
    accession="DEMO-ACC-0808",
    study_uid="2.25.111111111111111111111111111111111808",
    referrer="Referrer^Demo",
    institution="Demo Vascular Lab",
)


def main() -> None:
    """Write the example report."""
    ds = b.report(b.bilateral(), header=HEADER, summary="Fictional demonstration report.")
    b.write(ds, ROOT / "examples" / "sr" / "bilateral.dcm")


if __name__ == "__main__":
    main()
