#!/usr/bin/env bash
# Release check: build the sdist, install it into a fresh virtual environment (with the system
# site packages for cairo and the test libraries), then, from the unpacked sdist and with the
# installed package (not the source tree) on the path: `limbchart check` and `draw` on the
# examples, and the tests that read the examples and the package data.
# Usage: bash tools/check_sdist.sh [WORKDIR]   (needs `build`, the dev extra, and the index)
set -euo pipefail
root=$(cd "$(dirname "$0")/.." && pwd)
work=${1:-$(mktemp -d)}
python -m build --sdist --outdir "$work/dist" "$root" >/dev/null
sdist=$(ls "$work"/dist/limbchart-*.tar.gz)
python -m venv --system-site-packages "$work/venv"
"$work/venv/bin/pip" install -q "$sdist"
mkdir -p "$work/src" && tar xzf "$sdist" -C "$work/src"
src=$(ls -d "$work"/src/limbchart-*)
cd "$src"
mv diagram "$work/diagram.unused"  # the tests must import the installed package
"$work/venv/bin/python" -c "import diagram; assert '/site-packages/' in diagram.__file__, diagram.__file__; print('installed:', diagram.__file__)"
"$work/venv/bin/limbchart" check examples/normal.yaml >/dev/null
"$work/venv/bin/limbchart" check --json examples/sr/bilateral.dcm >/dev/null
"$work/venv/bin/limbchart" draw examples/clti-multilevel.yaml -o "$work/out.pdf" >/dev/null
"$work/venv/bin/python" -m pytest -q -p no:cacheprovider tests/test_results_schema.py \
    tests/test_sr.py tests/test_docmeta.py
echo "sdist check passed: $sdist"
