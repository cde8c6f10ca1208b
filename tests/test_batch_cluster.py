"""A batch drawn on a Dask cluster (``draw --scheduler``) ends as the local pool's does.

The cluster is real: a scheduler and two worker processes started here, on this machine. The
same batch is drawn by the local pool (``--jobs 2``) and by the cluster, and the two output
folders are compared: manifest, file names, SVG and results JSON byte for byte, PDF byte for
byte except the creation time cairo writes into it, and the text pdftotext reads from each PDF.
"""

from __future__ import annotations

import importlib.util
import json
import os
import re
import shutil
import signal
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

from diagram.cli.main import main
from tests.batch_signals import interrupt_after_first_map
from tests.benchmarks.generate import write_studies

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"
CREATED = re.compile(rb"/CreationDate \(D:\d{14}Z\)")  # cairo's clock, the one difference
WAIT_SECONDS = 120
needs_dask = pytest.mark.skipif(
    importlib.util.find_spec("distributed") is None,
    reason="dask.distributed is not installed (pip install 'limbchart[dask]')",
)


def run(args: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str]:
    with pytest.raises(SystemExit) as done:
        main(args)
    return int(done.value.code or 0), capsys.readouterr().err


@pytest.fixture(scope="module")
def scheduler() -> Iterator[str]:
    """Start a scheduler and two single-threaded worker processes; return its address."""
    distributed = pytest.importorskip("distributed", reason="dask.distributed is not installed")
    with distributed.LocalCluster(
        n_workers=2, processes=True, threads_per_worker=1, dashboard_address=":0"
    ) as cluster:
        yield cluster.scheduler_address


def manifest(out: Path) -> dict[str, Any]:
    doc = json.loads((out / "manifest.json").read_text("utf-8"))
    assert isinstance(doc, dict)
    return doc


def pdftotext(path: Path) -> str:
    return subprocess.run(
        ["pdftotext", "-layout", str(path), "-"], capture_output=True, text=True, check=True
    ).stdout


@needs_dask
def test_the_cluster_draws_a_batch_as_the_local_pool_does(
    scheduler: str, inputs: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    formats = ["--format", "pdf", "--format", "svg", "--format", "json"]
    local, cluster = tmp_path / "local", tmp_path / "cluster"
    code_l, err_l = run(["draw", str(inputs), "-o", f"{local}/", *formats, "--jobs", "2"], capsys)
    code_c, err_c = run(
        ["draw", str(inputs), "-o", f"{cluster}/", *formats, "--scheduler", scheduler], capsys
    )
    # one study fails the same way; the exit status and summary are the same
    assert (code_l, code_c) == (2, 2)
    assert err_l.splitlines()[-1] == err_c.splitlines()[-1] == "3 of 4 studies drawn, 1 failed."
    broken = f"{inputs / 'zz-broken.yaml'}:2: limbs.left.segments.SFA-X: is not a segment id"
    assert broken in err_l and broken in err_c and "Traceback" not in err_c
    # progress: one line per study drawn, naming its files (the workers' absolute paths)
    for n, name in enumerate(("claudicant-sfa", "multilevel-occlusion", "normal"), start=1):
        files = ", ".join(f"{cluster / f'map-{n:04d}'}.{fmt}" for fmt in ("pdf", "svg", "json"))
        assert f"{inputs / name}.yaml -> {files}" in err_c.splitlines()
    assert err_l.count(" -> ") == err_c.count(" -> ") == 3
    # the same manifest: inputs, names, statuses, errors and counts
    assert manifest(local) == manifest(cluster)
    assert manifest(cluster)["batch"] == {
        "status": "finished",
        "drawn": 3,
        "failed": 1,
        "not_drawn": 0,
    }
    names = sorted(os.listdir(local))
    assert names == sorted(os.listdir(cluster)) and len(names) == 3 * 3 + 1
    for name in names:
        mine, theirs = (local / name).read_bytes(), (cluster / name).read_bytes()
        if name.endswith(".pdf"):
            assert len(CREATED.findall(mine)) == len(CREATED.findall(theirs)) == 1
            mine, theirs = CREATED.sub(b"", mine), CREATED.sub(b"", theirs)
            assert pdftotext(local / name) == pdftotext(cluster / name)
            assert "Schematic aid" in pdftotext(cluster / name)
        assert mine == theirs, name


@needs_dask
def test_a_name_clash_is_refused_before_the_cluster_draws_anything(
    scheduler: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    first, second = tmp_path / "a" / "study.yaml", tmp_path / "b" / "study.yaml"
    for path in (first, second):
        path.parent.mkdir()
        shutil.copy(EXAMPLES / "normal.yaml", path)
    out = tmp_path / "out"
    args = ["draw", str(first), str(second), "-o", f"{out}/", "--name", "{stem}"]
    local = run([*args, "--jobs", "2"], capsys)
    cluster = run([*args, "--scheduler", scheduler], capsys)
    assert local == cluster
    assert cluster[0] == 2
    assert cluster[1].splitlines() == [
        f"{out / 'study.pdf'}: would be written for {first}, {second} (give --name a field "
        "that tells them apart, such as {n}, {stem} or {folder}, e.g. --name '{folder}-{stem}').",
        "nothing was drawn.",
    ]
    assert not out.exists()


@needs_dask
def test_workers_running_another_version_refuse_the_batch(
    scheduler: str,
    tmp_path: Path,
    monkeypatch: pytest.MonkeyPatch,
    capsys: pytest.CaptureFixture[str],
) -> None:
    import diagram.batch.cluster as cluster

    monkeypatch.setattr(cluster, "__version__", "0.0.0-other")  # this side only
    out = tmp_path / "out"
    code, err = run(
        ["draw", str(EXAMPLES / "normal.yaml"), "-o", f"{out}/", "--scheduler", scheduler],
        capsys,
    )
    lines = err.splitlines()
    assert code == 2 and len(lines) == 3 and lines[-1] == "nothing was drawn."
    for line in lines[:2]:  # one per worker
        assert re.fullmatch(
            r"tcp://127\.0\.0\.1:\d+: runs limbchart \S+, and this batch was started with "
            r"0\.0\.0-other; install the same version on every worker\.",
            line,
        ), line
    assert os.listdir(out) == []  # no manifest, no map


def test_a_worker_that_cannot_write_the_output_folder_says_so(tmp_path: Path) -> None:
    from diagram._version import __version__
    from diagram.batch.cluster import worker_view

    assert worker_view(str(tmp_path), __version__) is None
    problem = worker_view(str(tmp_path / "not-mounted"), __version__)
    assert problem == (
        f"cannot write into the output folder {tmp_path / 'not-mounted'} (No such file or "
        "directory); the workers must see it at the same path (a shared file system)."
    )


@needs_dask
def test_an_unreachable_scheduler_is_one_line_after_the_connect_timeout(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    import diagram.batch.cluster as cluster

    monkeypatch.setattr(cluster, "CONNECT_SECONDS", 2.0)
    with socket.socket() as probe:  # a port nothing listens on
        probe.bind(("127.0.0.1", 0))
        port = probe.getsockname()[1]
    out = tmp_path / "out"
    start = time.monotonic()
    code, err = run(
        [
            "draw",
            str(EXAMPLES / "normal.yaml"),
            "-o",
            f"{out}/",
            "--scheduler",
            f"tcp://127.0.0.1:{port}",
        ],
        capsys,
    )
    elapsed = time.monotonic() - start
    assert code == 2
    assert len(err.splitlines()) == 1, err
    assert err == (
        f"--scheduler tcp://127.0.0.1:{port}: no Dask scheduler answered within 2 s; check the "
        "address and that the scheduler is running.\n"
    )
    assert 1.5 < elapsed < 30, elapsed  # it waited for the timeout, and no longer than it
    assert not out.exists()


def test_without_the_extra_the_option_says_how_to_install_it(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    monkeypatch.setitem(sys.modules, "distributed", None)  # `import distributed` now fails
    out = tmp_path / "out"
    code, err = run(
        ["draw", str(EXAMPLES / "normal.yaml"), "-o", f"{out}/", "--scheduler", "tcp://x:8786"],
        capsys,
    )
    assert (code, err) == (
        2,
        "--scheduler: drawing on a Dask cluster needs the optional dask extra, which is not "
        "installed here; install it with: pip install 'limbchart[dask]'\n",
    )
    assert not out.exists()


@pytest.mark.parametrize(
    ("extra", "output", "message"),
    [
        (
            ["--jobs", "2"],
            "out/",
            "--scheduler draws a batch (-o a folder) on a Dask cluster, whose workers replace "
            "--jobs; give one of the two.",
        ),
        ([], "x.pdf", "--scheduler draws a batch; for one study give -o a folder, ending in /."),
    ],
)
def test_scheduler_with_jobs_or_one_file_is_refused(
    tmp_path: Path,
    extra: list[str],
    output: str,
    message: str,
    capsys: pytest.CaptureFixture[str],
) -> None:
    study = str(EXAMPLES / "normal.yaml")
    target = tmp_path / output
    code, err = run(
        [
            "draw",
            study,
            "-o",
            str(target) + ("/" if output.endswith("/") else ""),
            "--scheduler",
            "tcp://x:8786",
            *extra,
        ],
        capsys,
    )
    assert code == 2
    assert [line for line in err.splitlines() if line.startswith("Error:")] == [f"Error: {message}"]
    assert not (tmp_path / "out").exists() and not (tmp_path / "x.pdf").exists()


@needs_dask
def test_an_interrupted_cluster_batch_cancels_and_still_writes_the_manifest(
    scheduler: str, tmp_path: Path
) -> None:
    studies = 40
    write_studies(tmp_path / "in", studies)
    out = tmp_path / "out"
    args = ["draw", str(tmp_path / "in"), "-o", f"{out}/", "--scheduler", scheduler]
    proc = subprocess.Popen(
        [sys.executable, "-m", "diagram", *args],
        cwd=ROOT,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        start_new_session=True,
    )
    # Ctrl-C in a terminal: SIGINT to the whole group
    err = interrupt_after_first_map(proc, out, signal.SIGINT, whole_group=True, wait=WAIT_SECONDS)
    assert proc.returncode == 130, err
    assert "Traceback" not in err, err
    summary = re.fullmatch(
        r"(\d+) of (\d+) studies drawn, (\d+) failed, (\d+) not drawn \(interrupted by SIGINT\)\.",
        err.splitlines()[-1],
    )
    assert summary, err.splitlines()[-1]
    drawn, total, failed, not_drawn = (int(summary[i]) for i in range(1, 5))
    assert total == studies and drawn + failed + not_drawn == studies and not_drawn > 0
    unknown = [line for line in err.splitlines() if ": (file): outcome unknown: " in line]
    assert len(unknown) == failed <= 2 * 2  # what the cluster held: two per worker thread
    assert manifest(out)["batch"] == {
        "status": "interrupted by SIGINT",
        "drawn": drawn,
        "failed": failed,
        "not_drawn": not_drawn,
    }
    time.sleep(1.0)  # a cancelled study still running on a worker may yet finish
    maps = [p.name for p in out.iterdir() if p.name != "manifest.json"]
    assert all(re.fullmatch(r"map-\d{4}\.pdf", name) for name in maps), maps  # nothing partial
    assert drawn <= len(maps) <= drawn + failed


@needs_dask
def test_a_cluster_without_workers_is_refused_rather_than_waited_on(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    distributed = pytest.importorskip("distributed")
    out = tmp_path / "out"
    with distributed.LocalCluster(n_workers=0, processes=True, dashboard_address=":0") as empty:
        address = empty.scheduler_address
        code, err = run(
            ["draw", str(EXAMPLES / "normal.yaml"), "-o", f"{out}/", "--scheduler", address],
            capsys,
        )
    assert (code, err) == (
        2,
        f"--scheduler {address}: the cluster has no workers; start some (dask worker ADDRESS) "
        "and draw again.\n",
    )
    assert not out.exists()


@needs_dask
@pytest.mark.parametrize(
    ("address", "reason"),
    [
        ("tcp://127.0.0.1:eighty", "invalid literal for int() with base 10: 'eighty'"),
        ("scheduler-host", "missing port number in address 'scheduler-host'"),
    ],
)
def test_a_malformed_scheduler_address_is_refused_at_once(
    address: str, reason: str, tmp_path: Path
) -> None:
    args = ["draw", str(EXAMPLES / "normal.yaml"), "-o", f"{tmp_path / 'out'}/"]
    done = subprocess.run(
        [sys.executable, "-m", "diagram", *args, "--scheduler", address],
        capture_output=True,
        text=True,
        timeout=WAIT_SECONDS,
    )
    assert (done.returncode, done.stderr) == (
        2,
        f"--scheduler {address}: is not a scheduler's address ({reason}); give one like "
        "tcp://host:8786.\n",
    )
    assert not (tmp_path / "out").exists()


@needs_dask
def test_a_worker_drawing_in_several_threads_draws_the_same_files(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """A cluster's worker may run several studies at once in threads of one process."""
    distributed = pytest.importorskip("distributed")
    write_studies(tmp_path / "in", 6)
    formats = ["--format", "png", "--format", "json", "--dpi", "50", "--quiet"]
    local, threads = tmp_path / "local", tmp_path / "threads"
    assert (
        run(["draw", str(tmp_path / "in"), "-o", f"{local}/", *formats, "--jobs", "1"], capsys)[0]
        == 0
    )
    with distributed.LocalCluster(
        n_workers=1, processes=True, threads_per_worker=3, dashboard_address=":0"
    ) as cluster:
        args = ["draw", str(tmp_path / "in"), "-o", f"{threads}/", *formats]
        code, err = run([*args, "--scheduler", cluster.scheduler_address], capsys)
    assert (code, err) == (0, "6 of 6 studies drawn, 0 failed.\n")
    names = sorted(os.listdir(local))
    assert names == sorted(os.listdir(threads)) and len(names) == 6 * 2 + 1
    assert [n for n in names if (local / n).read_bytes() != (threads / n).read_bytes()] == []
