"""Benchmarks: figures measured side by side in one run, printed as ratios.

    python tests/benchmarks/bench.py            # all sections
    python tests/benchmarks/bench.py stages labels cold batch

Sections:
  stages  per study (normal, busy, synthetic worst case): load, assess, layout, render, PDF
          export timed separately; our own work (load..render) as a ratio of cairosvg's
          conversion of the same SVG to PDF. Target <= 0.5x.
  labels  label packing cost for 10, 50, 200, 1000 labels; growth against n log n; 200 < 20 ms.
  cold    `limbchart --help` and `limbchart check` against `python -c "import click"`.
  batch   200 generated studies to PDF with --jobs 1 and --jobs 2: studies/s and speed-up
          (target >= 1.7x on two cores); parent peak memory for 50 vs 500 studies; the same
          200 on a Dask cluster of two worker processes started here, beside --jobs 2 (needs
          the dask extra).
  cairo   the Scene painted by cairo against the SVG converted by CairoSVG, side by side:
          cold `limbchart draw BUSIEST -o x.pdf` against a cold `python -m cairosvg` of the
          same SVG (target <= 0.6x); warm PDF per page (target <= 25 ms); a batch of 200 to
          PDF with both renderers at the same --jobs (target >= 4x the studies/s).

  cairo-cold  the cold comparison of `cairo` alone. Both compile the package's bytecode first
          (`python -m compileall`), as an installed package has it, and say so.

  edit    the editor's change round trip over HTTP (request, validate, assess, layout, SVG,
          response) against a running `limbchart edit`, per example: median and 95th
          percentile of 200 changes; target p95 <= 150 ms for the busiest example. Beside it the
          server's CPU time per change (from /proc: what a change costs, whatever else the
          machine does) and the same preview made in-process, as a ratio.

Not a test: nothing here asserts. Write the printed figures into DEVELOPERS.md.
"""

from __future__ import annotations

import math
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parents[1]
sys.path.insert(0, str(HERE))

from generate import study as gen_study  # noqa: E402
from generate import write_studies  # noqa: E402


def best_of(fn: Callable[[], object], repeat: int = 7) -> float:
    """Return the median wall time of ``fn`` in seconds over ``repeat`` runs (after a warm-up)."""
    fn()
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def stages() -> None:
    import yaml

    from diagram._version import __version__
    from diagram.assess import assess
    from diagram.drawing.layout import layout
    from diagram.drawing.template.mapfile import load_template
    from diagram.output.export import Drawing, render_bytes
    from diagram.output.svg import render_svg
    from diagram.reading.load import load_study

    tmp = Path(tempfile.mkdtemp())
    worst = tmp / "worst.yaml"
    worst.write_text(yaml.safe_dump(gen_study(1, crowded=True), sort_keys=False))
    cases = {
        "normal": ROOT / "examples" / "normal.yaml",
        "busy": ROOT / "examples" / "multilevel-occlusion.yaml",
        "worst": worst,
    }
    template = load_template(None)
    print("stages (median of 7, ms)")
    print(
        f"{'study':8} {'load':>7} {'assess':>7} {'layout':>7} {'render':>7} "
        f"{'ours':>7} {'pdf':>8} {'ours/pdf':>9}"
    )
    for name, path in cases.items():
        study = load_study(path)
        assessment = assess(study)
        scene = layout(assessment, template, page="a4", version=__version__)
        svg = render_svg(scene)
        t_load = best_of(lambda p=path: load_study(p))  # type: ignore[misc]
        t_assess = best_of(lambda s=study: assess(s))  # type: ignore[misc]
        t_layout = best_of(
            lambda a=assessment: layout(
                a,
                template,
                page="a4",  # type: ignore[misc]
                version=__version__,
            )
        )
        t_render = best_of(lambda s=scene: render_svg(s))  # type: ignore[misc]
        drawing = Drawing(results={}, svg_pages=(svg,))
        t_pdf = best_of(lambda d=drawing: render_bytes(d, "pdf"), repeat=5)  # type: ignore[misc]
        ours = t_load + t_assess + t_layout + t_render
        print(
            f"{name:8} {t_load * 1e3:7.1f} {t_assess * 1e3:7.1f} {t_layout * 1e3:7.1f} "
            f"{t_render * 1e3:7.1f} {ours * 1e3:7.1f} {t_pdf * 1e3:8.1f} {ours / t_pdf:8.2f}x"
        )


def labels() -> None:
    """Label layout core: measure each label's text with the font metrics, then pack them."""
    import random

    from diagram.drawing.map.labels import pack_1d
    from diagram.drawing.textmetrics import text_width

    print("label layout: text measured with font metrics + packed in columns (median of 7)")
    print(f"{'labels':>7} {'ms':>8} {'ms / (n log2 n)':>16}")
    base = None
    for n in (10, 50, 200, 1000):
        rng = random.Random(n)
        texts = [
            f"PSV {rng.randint(100, 600)} / EDV {rng.randint(5, 120)} / Vr {rng.uniform(1, 9):.2f}"
            for _ in range(n)
        ]
        wanted = [rng.uniform(0, 20.0 * n) for _ in range(n)]

        def run(t: list[str] = texts, w: list[float] = wanted, size: int = n) -> object:
            widths = [text_width(x, 7.0) for x in t]
            heights = [9.0 if wd < 120 else 18.0 for wd in widths]
            return pack_1d(w, heights, 1.5, 0.0, 20.0 * size)

        t = best_of(run)
        per = t * 1e3 / (n * math.log2(n))
        base = base or per
        print(
            f"{n:7d} {t * 1e3:8.3f} {per:16.5f}  ({per / base:.2f}x the 10-label cost per n log n)"
        )
    centres = [float(i % 50) for i in range(20000)]  # worst case: all wanted in one cluster
    t = best_of(lambda: pack_1d(centres, [1.0] * 20000, 0.0, 0.0, 1e6), repeat=3)
    print(f"  20000 labels in one cluster: {t * 1e3:.0f} ms packing (an O(n^2) merge: minutes)")


def _interleaved(commands: dict[str, list[str]], rounds: int) -> dict[str, float]:
    """Return each command's median wall time, the commands run in turn in every round.

    Taking turns puts every command under the same load on a shared machine, so the ratios
    hold even when the absolute times drift.
    """
    times: dict[str, list[float]] = {name: [] for name in commands}
    for args in commands.values():  # warm the file cache and the bytecode
        subprocess.run(args, check=True, capture_output=True)
    for _ in range(rounds):
        for name, args in commands.items():
            t0 = time.perf_counter()
            subprocess.run(args, check=True, capture_output=True)
            times[name].append(time.perf_counter() - t0)
    return {name: statistics.median(ts) for name, ts in times.items()}


def cold() -> None:
    """`limbchart --help` (and each command's --help) against `python -c "import click"`."""
    py = sys.executable
    script = str(Path(py).with_name("limbchart"))
    commands = {
        "python -c 'import click'": [py, "-c", "import click"],
        "limbchart --help": [script, "--help"],
        "limbchart draw --help": [script, "draw", "--help"],
        "limbchart teach --help": [script, "teach", "--help"],
        "limbchart template --help": [script, "template", "--help"],
        "limbchart check (small)": [script, "check", str(ROOT / "examples" / "normal.yaml")],
    }
    rounds = 21
    got = _interleaved(commands, rounds)
    base = got["python -c 'import click'"]
    print(f"cold start (median of {rounds} interleaved runs, ms; target --help <= 1.3x)")
    for name, t in got.items():
        print(f"  {name:27s} {t * 1e3:7.1f}  {t / base:.2f}x")


def _batch_once(
    folder: Path, jobs: int, renderer: str = "cairo", scheduler: str | None = None
) -> tuple[float, float]:
    out = Path(tempfile.mkdtemp())
    where = ["--scheduler", scheduler] if scheduler else ["--jobs", str(jobs)]
    code = (
        "import resource, sys\n"
        "from diagram.cli.main import main\n"
        "try:\n"
        f"    main(['draw', {str(folder)!r}, '-o', {str(out) + '/'!r}, '--format', 'pdf',"
        f" *{where!r}, '--quiet', '--renderer', {renderer!r}])\n"
        "except SystemExit:\n"
        "    pass\n"
        "print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)\n"
    )
    t0 = time.perf_counter()
    done = subprocess.run([sys.executable, "-c", code], check=True, capture_output=True, text=True)
    elapsed = time.perf_counter() - t0
    return elapsed, float(done.stdout.strip().splitlines()[-1]) / 1024


def _batch_on_cluster(folder: Path, rounds: int = 2) -> None:
    """The same studies with --jobs 2 and on a Dask cluster of two single-threaded worker
    processes, taking turns round by round so both see the same load; medians."""
    try:
        from distributed import LocalCluster
    except ImportError:
        print("  dask cluster: skipped (pip install 'limbchart[dask]')")
        return
    t0 = time.perf_counter()
    with LocalCluster(
        n_workers=2, processes=True, threads_per_worker=1, dashboard_address=":0"
    ) as cluster:
        started = time.perf_counter() - t0
        address = cluster.scheduler_address
        fresh, _ = _batch_once(folder, 2, scheduler=address)  # the workers import limbchart
        local, dask = [], []
        for _ in range(rounds):
            local.append(_batch_once(folder, 2)[0])
            dask.append(_batch_once(folder, 2, scheduler=address)[0])
    n = len(list(folder.iterdir()))
    t_local, t_dask = statistics.median(local), statistics.median(dask)
    print(f"  the same {n} studies, --jobs 2 against a Dask cluster (median of {rounds} turns)")
    print(f"    --jobs 2                  {t_local:6.1f} s  {n / t_local:6.1f} studies/s  1.00x")
    print(
        f"    dask, 2 worker processes  {t_dask:6.1f} s  {n / t_dask:6.1f} studies/s  "
        f"{t_local / t_dask:.2f}x"
    )
    print(
        f"    (first batch on fresh workers {n / fresh:.1f} studies/s; cluster start "
        f"{started:.1f} s, not counted)"
    )


def batch() -> None:
    tmp = Path(tempfile.mkdtemp())
    write_studies(tmp / "s200", 200)
    print(f"batch: 200 generated studies to PDF on {os.cpu_count()} CPUs")
    t1, m1 = _batch_once(tmp / "s200", 1)
    t2, m2 = _batch_once(tmp / "s200", 2)
    print(f"  --jobs 1  {t1:6.1f} s  {200 / t1:6.1f} studies/s  parent peak {m1:6.1f} MB")
    print(f"  --jobs 2  {t2:6.1f} s  {200 / t2:6.1f} studies/s  parent peak {m2:6.1f} MB")
    print(f"  speed-up  {t1 / t2:.2f}x")
    _batch_on_cluster(tmp / "s200")
    write_studies(tmp / "s50", 50)
    write_studies(tmp / "s500", 500)
    _, m50 = _batch_once(tmp / "s50", 2)
    _, m500 = _batch_once(tmp / "s500", 2)
    print(
        f"  parent peak memory: 50 studies {m50:.1f} MB, 500 studies {m500:.1f} MB "
        f"({m500 / m50:.2f}x)"
    )


def _edit_round_trips(path: Path, changes: int) -> tuple[list[float], float, float]:
    """Time ``changes`` preview round trips of one study (s).

    Return the round trips, the in-process median and the server's CPU seconds per change.
    """
    import http.client
    import json
    import shutil
    import signal
    from urllib.parse import urlsplit

    from diagram.editor.study_edit import EditedStudy, preview
    from diagram.reading.load import load_study
    from diagram.reading.plain import study_data

    with tempfile.TemporaryDirectory() as folder:
        copy = Path(folder) / path.name
        shutil.copy(path, copy)
        for sibling in path.parent.glob("*.yaml"):  # a prior is named relative to its study
            if not (Path(folder) / sibling.name).exists():
                shutil.copy(sibling, Path(folder) / sibling.name)
        process = subprocess.Popen(
            [sys.executable, "-m", "diagram", "edit", str(copy), "--no-browser"],
            stdout=subprocess.PIPE,
            stderr=subprocess.DEVNULL,
            text=True,
        )
        assert process.stdout is not None
        url = urlsplit(process.stdout.readline().strip())
        token = url.query.split("=", 1)[1]
        study = load_study(copy)
        doc = study_data(study)
        limbs = doc.setdefault("limbs", {})
        segments = limbs.setdefault("right", {}).setdefault("segments", {})
        sample = segments.setdefault("SFA-M", {})
        conn = http.client.HTTPConnection(url.hostname or "127.0.0.1", url.port, timeout=30)
        headers = {"Content-Type": "application/json", "X-Limbchart-Token": token}
        times = []
        cpu = 0.0
        try:
            for k in range(changes + 5):  # the first five warm up
                if k == 5:
                    cpu = -_cpu_seconds(process.pid)
                sample["psv"] = 80 + (k % 40) * 5  # every change moves the band or the label
                body = json.dumps(doc)
                t0 = time.perf_counter()
                conn.request("POST", "/api/preview", body=body, headers=headers)
                answer = conn.getresponse()
                data = answer.read()
                elapsed = time.perf_counter() - t0
                assert answer.status == 200 and b'"svg"' in data, data[:200]
                if k >= 5:
                    times.append(elapsed)
            cpu += _cpu_seconds(process.pid)
        finally:
            conn.close()
            process.send_signal(signal.SIGINT)
            process.wait(timeout=30)
        edited = EditedStudy(copy, copy.parent)
        in_process = best_of(lambda: preview(study, edited), repeat=15)
    return times, in_process, cpu / changes


def _cpu_seconds(pid: int) -> float:
    """Return the CPU time (user + system) a process has used, from /proc."""
    fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")


def edit() -> None:
    changes = 200
    print(f"editor change round trip over HTTP ({changes} changes per study, ms)")
    print(
        f"{'study':24} {'median':>7} {'p95':>7} {'max':>7} {'server cpu':>11} "
        f"{'in-process':>11} {'http/in':>8}"
    )
    worst = ("", 0.0)
    for path in sorted((ROOT / "examples").glob("*.yaml")):
        times, in_process, cpu = _edit_round_trips(path, changes)
        times.sort()
        p95 = times[math.ceil(0.95 * len(times)) - 1]
        median = statistics.median(times)
        print(
            f"{path.stem:24} {median * 1e3:7.1f} {p95 * 1e3:7.1f} {times[-1] * 1e3:7.1f} "
            f"{cpu * 1e3:11.1f} {in_process * 1e3:11.1f} {median / in_process:7.2f}x"
        )
        if p95 > worst[1]:
            worst = (path.stem, p95)
    print(f"busiest: {worst[0]}, p95 {worst[1] * 1e3:.1f} ms (target <= 150 ms)")
    print(f"load average while measured: {os.getloadavg()[0]:.1f} on {os.cpu_count()} CPUs")


def _busiest() -> Path:
    """Return the example whose sheet holds the most characters of text."""
    from diagram.drawing.scene import Text
    from diagram.pipeline import draw
    from diagram.reading.load import load_study

    def chars(path: Path) -> int:
        scene = draw(load_study(path)).scene
        assert scene is not None
        return sum(len(i.text) for p in scene.pages() for i in p.walk() if isinstance(i, Text))

    return max(sorted((ROOT / "examples").glob("*.yaml")), key=chars)


def _compile_bytecode() -> None:
    """Write the package's bytecode, as an installed package has it.

    This machine may set PYTHONDONTWRITEBYTECODE, in which case every cold process would compile
    the package from source while the libraries it is compared with run from their bytecode.
    """
    subprocess.run(
        [sys.executable, "-m", "compileall", "-q", str(ROOT / "diagram")],
        check=True,
        capture_output=True,
    )
    print(f"(bytecode compiled first: python -m compileall -q {ROOT / 'diagram'})")


def cairo_cold() -> None:
    """Cold `limbchart draw BUSIEST -o x.pdf` against a cold `python -m cairosvg` of its SVG."""
    busiest = _busiest()
    tmp = Path(tempfile.mkdtemp())
    svg = tmp / "busiest.svg"
    py = sys.executable
    subprocess.run([py, "-m", "diagram", "draw", str(busiest), "-o", str(svg)], check=True)
    _compile_bytecode()
    script = str(Path(py).with_name("limbchart"))
    out = str(tmp / "x.pdf")
    over = "--overwrite"
    commands = {
        "alone": [py, "-m", "cairosvg", str(svg), "-o", out],
        "ours": [script, "draw", str(busiest), "-o", out, over],
        "old": [script, "draw", str(busiest), "-o", out, over, "--renderer", "cairosvg"],
    }
    rounds = 11
    got = _interleaved(commands, rounds)
    alone, ours, old = got["alone"], got["ours"], got["old"]
    print(
        f"cold PDF of the busiest example ({busiest.name}; median of {rounds} interleaved "
        "cold processes, ms)"
    )
    print(f"  python -m cairosvg busiest.svg -o x.pdf         {alone * 1e3:7.1f}  1.00x")
    print(
        f"  limbchart draw busiest -o x.pdf                 {ours * 1e3:7.1f}  {ours / alone:.2f}x"
        "  (target <= 0.6x)"
    )
    print(f"  limbchart draw ... --renderer cairosvg          {old * 1e3:7.1f}  {old / alone:.2f}x")


def cairo() -> None:
    from diagram.output.export import ExportOptions, render_bytes
    from diagram.pipeline import draw
    from diagram.reading.load import load_study

    cairo_cold()
    busiest = _busiest()
    tmp = Path(tempfile.mkdtemp())
    drawing = draw(load_study(busiest))
    pages = drawing.page_count
    options = {name: ExportOptions(renderer=name) for name in ("cairo", "cairosvg")}
    warm = {
        name: best_of(lambda o=chosen: render_bytes(drawing, "pdf", o))  # type: ignore[misc]
        for name, chosen in options.items()
    }
    whole = best_of(lambda: render_bytes(draw(load_study(busiest)), "pdf"))
    print(f"warm PDF of the busiest example ({pages} pages; median of 7, ms per page)")
    print(f"  cairo     {warm['cairo'] * 1e3 / pages:7.1f}  (target <= 25)")
    print(
        f"  cairosvg  {warm['cairosvg'] * 1e3 / pages:7.1f}  ({warm['cairosvg'] / warm['cairo']:.1f}x)"
    )
    print(f"  load + assess + layout + cairo PDF  {whole * 1e3 / pages:7.1f}")
    write_studies(tmp / "s200", 200)
    jobs = 2
    t_old, _ = _batch_once(tmp / "s200", jobs, "cairosvg")
    t_new, _ = _batch_once(tmp / "s200", jobs, "cairo")
    print(f"batch: 200 generated studies to PDF, --jobs {jobs}, on {os.cpu_count()} CPUs")
    print(f"  --renderer cairosvg  {t_old:6.1f} s  {200 / t_old:6.1f} studies/s")
    print(
        f"  --renderer cairo     {t_new:6.1f} s  {200 / t_new:6.1f} studies/s  "
        f"{t_old / t_new:.2f}x  (target >= 4x)"
    )


SECTIONS = {
    "stages": stages,
    "labels": labels,
    "cold": cold,
    "batch": batch,
    "cairo": cairo,
    "cairo-cold": cairo_cold,
    "edit": edit,
}

if __name__ == "__main__":
    wanted = sys.argv[1:] or list(SECTIONS)
    unknown = [name for name in wanted if name not in SECTIONS]
    if unknown:
        print(
            f"usage: python tests/benchmarks/bench.py [SECTION ...]; sections: "
            f"{', '.join(SECTIONS)} (all of them when none is named)"
            + ("" if unknown[0] in ("-h", "--help") else f"; not a section: {', '.join(unknown)}"),
            file=sys.stderr,
        )
        sys.exit(0 if unknown[0] in ("-h", "--help") else 2)
    for name in wanted:
        SECTIONS[name]()
        print()
    _ = resource  # ru_maxrss is read in the child processes
