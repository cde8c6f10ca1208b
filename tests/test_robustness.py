"""Robustness: interrupted runs, outputs that cannot be written, no traceback from bad input.

Interrupts are real signals sent to a real ``python -m diagram`` process: SIGTERM to the parent
alone (``kill PID``), SIGINT to the whole process group (Ctrl-C in a terminal), and SIGTERM to
the whole group (a service manager stopping it). Unwritable folders are real where the machine
allows it (a read-only bind mount in a private mount namespace, or a path under a file) and
simulated otherwise (EACCES and ENOSPC injected into the write).
"""

from __future__ import annotations

import errno
import io
import json
import multiprocessing
import os
import re
import shutil
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

from diagram.cli.main import main
from diagram.errors import ExportError
from diagram.output.export import write_atomic
from tests.batch_signals import interrupt_after_first_map
from tests.benchmarks.generate import write_studies

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "claudicant-sfa.yaml"
STUDIES = 40
WAIT_SECONDS = 120  # for a subprocess to start drawing, or to end after a signal
FORKS = multiprocessing.get_all_start_methods()[0] == "fork"  # the default comes first
SUMMARY_DONE = re.compile(r"^(\d+) of (\d+) studies drawn, (\d+) failed\.$")
SUMMARY = re.compile(
    r"^(\d+) of (\d+) studies drawn, (\d+) failed, (\d+) not drawn \(interrupted by (SIG\w+)\)\.$"
)


def run(args: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    with pytest.raises(SystemExit) as done:
        main(args)
    out, err = capsys.readouterr()
    return int(done.value.code or 0), out, err


def limbchart(*args: str, **popen: object) -> subprocess.Popen[str]:
    return subprocess.Popen(  # type: ignore[call-overload, no-any-return]
        [sys.executable, "-m", "diagram", *args],
        cwd=ROOT,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        **popen,
    )


def assert_pdf_complete(path: Path) -> None:
    from pypdf import PdfReader

    data = path.read_bytes()
    assert data.startswith(b"%PDF-"), path
    assert data.rstrip().endswith(b"%%EOF"), f"{path} is truncated"
    reader = PdfReader(io.BytesIO(data))
    assert len(reader.pages) >= 1
    assert "Schematic aid" in reader.pages[0].extract_text(), path


def group_gone(pgid: int, seconds: float = 10) -> bool:
    """Return True once no process of the group is left (the workers ended with the parent)."""
    end = time.monotonic() + seconds
    while time.monotonic() < end:
        try:
            os.killpg(pgid, 0)
        except ProcessLookupError:
            return True
        time.sleep(0.05)
    return False


# --- interrupting a batch -------------------------------------------------------------------------


@pytest.fixture(scope="module")
def forty_studies(tmp_path_factory: pytest.TempPathFactory) -> Path:
    folder = tmp_path_factory.mktemp("studies")
    write_studies(folder, STUDIES)
    return folder


@pytest.mark.parametrize(
    ("signum", "whole_group", "status"),
    [
        pytest.param(signal.SIGTERM, False, 143, id="SIGTERM-to-parent"),
        pytest.param(signal.SIGINT, True, 130, id="SIGINT-to-group"),
        pytest.param(signal.SIGTERM, True, 143, id="SIGTERM-to-group"),
    ],
)
def test_an_interrupted_batch_leaves_complete_files_and_a_summary(
    forty_studies: Path, tmp_path: Path, signum: int, whole_group: bool, status: int
) -> None:
    out = tmp_path / "out"
    proc = limbchart(
        "draw", str(forty_studies), "-o", f"{out}/", "--jobs", "2", start_new_session=True
    )
    err = interrupt_after_first_map(proc, out, signum, whole_group=whole_group, wait=WAIT_SECONDS)
    assert proc.returncode == status, err
    assert "Traceback" not in err and "Exception ignored" not in err, err
    summary = SUMMARY.match(err.splitlines()[-1])
    assert summary, err.splitlines()[-1]
    drawn, total, failed, not_drawn = (int(summary[i]) for i in range(1, 5))
    assert summary[5] == signal.Signals(signum).name
    assert total == STUDIES and drawn + failed + not_drawn == STUDIES
    assert not_drawn > 0, "the batch ended before the signal"
    assert err.count(" -> ") == drawn  # one line per study drawn
    # a study whose worker was stopped (or died with the signal) before it reported
    unknown = [line for line in err.splitlines() if ": (file): outcome unknown: " in line]
    assert len(unknown) == failed <= 2 * 2  # the studies the pool held: two per worker
    names = sorted(p.name for p in out.iterdir() if p.name != "manifest.json")
    assert all(re.fullmatch(r"map-\d{4}\.pdf", name) for name in names), names  # no .part
    for name in names:
        assert_pdf_complete(out / name)
    # never a study drawn but left out of the count; the unknown ones may or may not be there
    assert drawn <= len(names) <= drawn + failed
    # the manifest was written after the interrupt, and says the same as the summary
    manifest = json.loads((out / "manifest.json").read_text("utf-8"))
    assert manifest["batch"] == {
        "status": f"interrupted by {signal.Signals(signum).name}",
        "drawn": drawn,
        "failed": failed,
        "not_drawn": not_drawn,
    }
    listed = {o for entry in manifest["studies"] for o in entry["outputs"]}
    assert {n for n in names if n in listed} == listed  # every file it lists as drawn is there
    assert group_gone(proc.pid), "a worker process outlived the batch"


def signal_this_thread(signum: int) -> None:
    """Send ``signum`` to the running thread, as the command line's only thread would get it.

    Sent to the process instead, the signal may go to any thread that does not block it: under
    pytest-xdist the worker has others, and the hold of a study in progress would be bypassed.
    """
    signal.pthread_kill(threading.get_ident(), signum)


def test_an_interrupted_single_draw_leaves_nothing(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    # SIGTERM arrives while the file is being written: half the bytes are out
    real_write = os.write
    calls = []

    def write_then_stop(fd: int, data: bytes | memoryview) -> int:
        calls.append(fd)
        written = real_write(fd, bytes(data[: max(1, len(data) // 2)]))
        signal_this_thread(signal.SIGTERM)
        return written

    before = signal.getsignal(signal.SIGTERM)
    monkeypatch.setattr(os, "write", write_then_stop)
    target = tmp_path / "out" / "map.svg"
    target.parent.mkdir()
    code, _, err = run(["draw", str(EXAMPLE), "-o", str(target)], capsys)
    monkeypatch.undo()
    assert calls, "the write was reached"
    assert code == 143
    assert err.strip().splitlines()[-1] == "interrupted"
    assert os.listdir(target.parent) == []
    assert signal.getsignal(signal.SIGTERM) == before  # main() put the handler back


def test_an_interrupted_single_draw_keeps_the_old_file(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    target = tmp_path / "map.json"
    target.write_text("old")

    def stop_at_rename(src: object, dst: object) -> None:
        signal_this_thread(signal.SIGINT)  # its handler raises before this returns

    monkeypatch.setattr(os, "replace", stop_at_rename)
    code, _, _ = run(["draw", str(EXAMPLE), "-o", str(target), "--overwrite"], capsys)
    monkeypatch.undo()
    assert code == 130
    assert os.listdir(tmp_path) == ["map.json"] and target.read_text() == "old"


def test_a_batch_in_one_process_finishes_the_study_in_hand_and_stops(
    forty_studies: Path,
    tmp_path: Path,
    monkeypatch: pytest.MonkeyPatch,
    capsys: pytest.CaptureFixture[str],
) -> None:
    import diagram.batch.run as batch

    real = batch.draw_one
    done: list[int] = []

    def draw_then_stop(task: batch.BatchTask) -> batch.BatchResult:
        if task.n == 3:
            signal_this_thread(signal.SIGTERM)  # held until this study is drawn and counted
        done.append(task.n)
        return real(task)

    monkeypatch.setattr(batch, "draw_one", draw_then_stop)
    out = tmp_path / "out"
    code, _, err = run(
        ["draw", str(forty_studies), "-o", f"{out}/", "--jobs", "1", "--format", "svg"], capsys
    )
    assert code == 143
    assert err.splitlines()[-1] == (
        f"3 of {STUDIES} studies drawn, 0 failed, {STUDIES - 3} not drawn (interrupted by SIGTERM)."
    )
    assert sorted(os.listdir(out)) == [
        "manifest.json",
        "map-0001.svg",
        "map-0002.svg",
        "map-0003.svg",
    ]
    assert done == [1, 2, 3]
    statuses = [e["status"] for e in json.loads((out / "manifest.json").read_text())["studies"]]
    assert statuses == ["drawn"] * 3 + ["not drawn"] * (STUDIES - 3)


@pytest.mark.skipif(not FORKS, reason="the failing worker is set up by patching before a fork")
def test_a_worker_that_dies_fails_its_studies_and_the_batch_goes_on(
    forty_studies: Path,
    tmp_path: Path,
    monkeypatch: pytest.MonkeyPatch,
    capsys: pytest.CaptureFixture[str],
) -> None:
    import diagram.batch.run as batch

    real = batch.draw_one

    def die_on_five(task: batch.BatchTask) -> batch.BatchResult:
        if task.n == 5:
            os._exit(9)  # as if killed for memory
        return real(task)

    monkeypatch.setattr(batch, "draw_one", die_on_five)
    inputs = tmp_path / "in"
    inputs.mkdir()
    for path in sorted(forty_studies.iterdir())[:12]:
        shutil.copy(path, inputs / path.name)
    out = tmp_path / "out"
    code, _, err = run(
        ["draw", str(inputs), "-o", f"{out}/", "--jobs", "2", "--format", "json"], capsys
    )
    assert code == 2
    assert "Traceback" not in err
    lost = [line for line in err.splitlines() if "outcome unknown" in line]
    assert any(line.startswith(f"{inputs / 'synthetic-00005.yaml'}: ") for line in lost), err
    summary = SUMMARY_DONE.match(err.splitlines()[-1])
    assert summary, err
    drawn, failed = int(summary[1]), int(summary[3])
    assert (int(summary[2]), failed) == (12, len(lost))
    assert 1 <= failed <= 2 * 2  # the studies in flight when the worker died (2 per worker)
    files = os.listdir(out)
    assert drawn <= len(files) <= drawn + failed - 1  # study 5 left nothing
    assert "map-0005.json" not in files and "map-0012.json" in files  # a new pool drew the rest


# --- outputs that cannot be written ---------------------------------------------------------------


def _unshare_works() -> bool:
    if shutil.which("unshare") is None or os.geteuid() != 0:
        return False
    probe = subprocess.run(
        ["unshare", "--mount", "--propagation", "private", "true"], capture_output=True
    )
    return probe.returncode == 0


@pytest.mark.skipif(not _unshare_works(), reason="needs root and mount namespaces")
def test_a_read_only_folder_is_a_one_line_error(tmp_path: Path) -> None:
    out = tmp_path / "ro"
    out.mkdir()
    target = out / "map.pdf"
    script = (
        f"mount --bind -o ro {out} {out} && "
        f"exec {sys.executable} -m diagram draw {EXAMPLE} -o {target}"
    )
    done = subprocess.run(
        ["unshare", "--mount", "--propagation", "private", "sh", "-c", script],
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=WAIT_SECONDS,
    )
    assert done.returncode == 2, done.stderr
    assert done.stderr == (
        f"{target}: cannot be written: the folder {out} is on a read-only file system.\n"
    )
    assert os.listdir(out) == []


@pytest.mark.skipif(os.geteuid() != 0, reason="a plain user gets the real error from chmod")
def test_a_folder_without_write_permission_is_a_one_line_error(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    # root writes anywhere, so the refusal is injected where the kernel would give it
    real_open = os.open

    def refuse(path: str | os.PathLike[str], flags: int, mode: int = 0o777) -> int:
        if Path(path).parent == tmp_path and flags & os.O_CREAT:
            raise PermissionError(errno.EACCES, os.strerror(errno.EACCES), str(path))
        return real_open(path, flags, mode)

    monkeypatch.setattr(os, "open", refuse)
    target = tmp_path / "map.svg"
    code, out, err = run(["draw", str(EXAMPLE), "-o", str(target)], capsys)
    assert (code, out) == (2, "")
    assert err == f"{target}: cannot be written: no permission to write in the folder {tmp_path}.\n"
    assert os.listdir(tmp_path) == []


@pytest.mark.skipif(os.geteuid() == 0, reason="root can write to a read-only folder")
def test_a_folder_without_write_permission_is_a_one_line_error_for_a_user(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    folder = tmp_path / "locked"
    folder.mkdir(mode=0o500)
    target = folder / "map.svg"
    try:
        code, _, err = run(["draw", str(EXAMPLE), "-o", str(target)], capsys)
    finally:
        folder.chmod(0o700)
    assert code == 2
    assert err == f"{target}: cannot be written: no permission to write in the folder {folder}.\n"
    assert os.listdir(folder) == []


@pytest.mark.parametrize("fmt", ["svg", "pdf", "json"])
def test_a_full_disk_is_a_one_line_error_and_leaves_nothing(
    fmt: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    # the first write gets half the bytes out, the next finds the disk full
    real_write = os.write
    state = {"calls": 0}

    def fill_up(fd: int, data: bytes | memoryview) -> int:
        if fd <= 2:
            return real_write(fd, data)
        state["calls"] += 1
        if state["calls"] == 1:
            return real_write(fd, bytes(data[: len(data) // 2]))
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    target = tmp_path / f"map.{fmt}"
    target.write_bytes(b"the previous map")
    monkeypatch.setattr(os, "write", fill_up)
    code, _, err = run(["draw", str(EXAMPLE), "-o", str(target), "--overwrite"], capsys)
    monkeypatch.undo()
    assert state["calls"] == 2
    assert code == 2
    assert err == (
        f"{target}: cannot be written: no space left on the disk (or the disk quota is used "
        "up); nothing was written.\n"
    )
    assert os.listdir(tmp_path) == [target.name]
    assert target.read_bytes() == b"the previous map"


def test_an_output_path_under_a_file_is_a_one_line_error(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    (tmp_path / "notes.txt").write_text("a file, not a folder")
    target = tmp_path / "notes.txt" / "map.svg"
    code, _, err = run(["draw", str(EXAMPLE), "-o", str(target)], capsys)
    assert code == 2
    assert err == f"{target}: {tmp_path / 'notes.txt'} is a file, not a folder.\n"
    assert os.listdir(tmp_path) == ["notes.txt"]


def test_a_missing_folder_is_a_one_line_error(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    target = tmp_path / "no" / "such" / "map.pdf"
    code, _, err = run(["draw", str(EXAMPLE), "-o", str(target)], capsys)
    assert code == 2
    assert err == f"{target}: the folder {target.parent} does not exist.\n"
    assert os.listdir(tmp_path) == []


def test_an_output_that_is_a_folder_is_a_one_line_error(tmp_path: Path) -> None:
    with pytest.raises(ExportError) as caught:
        write_atomic(tmp_path, b"x")
    assert caught.value.lines() == [
        f"{tmp_path}: is a folder; give a file name such as {tmp_path / 'map.pdf'}."
    ]
    assert os.listdir(tmp_path) == []


def test_a_batch_output_that_is_a_folder_is_reported_and_the_rest_drawn(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    out = tmp_path / "out"
    (out / "map-0001.svg").mkdir(parents=True)  # in the way of the first study's map
    second = tmp_path / "second.yaml"
    shutil.copy(EXAMPLE, second)
    code, _, err = run(
        ["draw", str(EXAMPLE), str(second), "-o", f"{out}/", "--format", "svg", "--overwrite"],
        capsys,
    )
    assert code == 2
    assert f"{out / 'map-0001.svg'}: is a folder" in err
    assert err.splitlines()[-1] == "1 of 2 studies drawn, 1 failed."
    assert sorted(os.listdir(out)) == ["manifest.json", "map-0001.svg", "map-0002.svg"]
    assert (out / "map-0001.svg").is_dir()


def test_a_study_with_several_formats_leaves_all_or_none(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    # the second of three files finds the disk full: the first is taken back
    real_link = os.link
    linked: list[str] = []

    def full_on_second(src: str | os.PathLike[str], dst: str | os.PathLike[str]) -> None:
        if linked:
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
        linked.append(str(dst))
        real_link(src, dst)

    monkeypatch.setattr(os, "link", full_on_second)  # how a new file gets its name
    out = tmp_path / "out"
    args = ["draw", str(EXAMPLE), "-o", f"{out}/", "--jobs", "1"]
    code, _, err = run([*args, "--format", "json", "--format", "svg", "--format", "pdf"], capsys)
    assert code == 2
    assert linked == [str(out / "map-0001.json")]
    assert f"{out / 'map-0001.svg'}: cannot be written: no space left" in err
    assert os.listdir(out) == ["manifest.json"]
    manifest = json.loads((out / "manifest.json").read_text())
    assert [(e["status"], e["outputs"]) for e in manifest["studies"]] == [("failed", [])]


def test_write_atomic_leaves_no_temporary_file_whatever_interrupts_it(tmp_path: Path) -> None:
    # an interrupt at each step of the write: never a stray .part file
    real_close = os.close
    steps = [(s, True) for s in ("open", "write", "fsync", "close", "replace")]
    steps += [(s, False) for s in ("open", "write", "fsync", "close", "link")]  # a new file
    for step, overwrite in steps:
        real = getattr(os, step)

        def interrupt(*args: object, real: object = real, step: str = step) -> object:
            assert callable(real)
            done = real(*args)  # the step happens, then the interrupt
            if step == "open":
                real_close(done)
            raise KeyboardInterrupt

        setattr(os, step, interrupt)
        try:
            with pytest.raises(KeyboardInterrupt):
                write_atomic(tmp_path / "m.svg", b"<svg/>", overwrite=overwrite)
        finally:
            setattr(os, step, real)
        left = os.listdir(tmp_path)
        assert left in ([], ["m.svg"]), (step, overwrite, left)
        if left:
            assert (tmp_path / "m.svg").read_bytes() == b"<svg/>"
            (tmp_path / "m.svg").unlink()


def test_drawing_a_study_needs_no_write_access_beside_the_study(tmp_path: Path) -> None:
    # a write goes only to the output folder: the study's folder and the cwd stay as they were
    study = tmp_path / "in" / "s.yaml"
    study.parent.mkdir()
    shutil.copy(EXAMPLE, study)
    out = tmp_path / "out"
    out.mkdir()
    proc = limbchart("draw", str(study), "-o", str(out / "m.svg"))
    _, err = proc.communicate(timeout=WAIT_SECONDS)
    assert proc.returncode == 0, err
    assert os.listdir(study.parent) == ["s.yaml"] and os.listdir(out) == ["m.svg"]


@pytest.mark.parametrize(
    ("length", "accepted"),
    [(250, True), (255, True), (256, False)],  # bytes; 255 is the usual file system limit
)
def test_the_longest_name_a_folder_takes_is_written(
    tmp_path: Path, length: int, accepted: bool
) -> None:
    target = tmp_path / ("m" * (length - 4) + ".svg")
    if accepted:
        write_atomic(target, b"<svg/>")
        assert os.listdir(tmp_path) == [target.name]
        return
    with pytest.raises(ExportError) as caught:
        write_atomic(target, b"<svg/>")
    assert caught.value.lines() == [f"{target}: cannot be written: the file name is too long."]
    assert os.listdir(tmp_path) == []


@pytest.mark.parametrize(
    ("done", "failed", "stopped_by", "line", "status"),
    [
        (40, 0, None, "40 of 40 studies drawn, 0 failed.", 0),
        (39, 1, None, "39 of 40 studies drawn, 1 failed.", 2),
        (
            3,
            1,
            signal.SIGINT,
            "3 of 40 studies drawn, 1 failed, 36 not drawn (interrupted by SIGINT).",
            130,
        ),
        (
            3,
            0,
            signal.SIGTERM,
            "3 of 40 studies drawn, 0 failed, 37 not drawn (interrupted by SIGTERM).",
            143,
        ),
    ],
)
def test_the_batch_summary_line_and_exit_status(
    done: int, failed: int, stopped_by: int | None, line: str, status: int
) -> None:
    from diagram.batch.run import BatchSummary

    summary = BatchSummary(
        done=done, failed=failed, interrupted=stopped_by is not None, signal=stopped_by
    )
    assert summary.line(40) == line
    assert summary.exit_status == status


def test_a_message_is_one_line_whatever_the_file_holds(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # a key with a line break and a terminal escape: printed escaped, on one line
    study = tmp_path / "s.json"
    study.write_text('{"format": 1, "a\\nb\\u001b[2J": 1}')
    code, _, err = run(["check", str(study)], capsys)
    assert code == 2
    assert err == f"{study}:1: a\\nb\\x1b[2J: is not a known key.\n"


# --- no traceback from bad input --------------------------------------------------------------------

BAD_TEXT = {
    "binary.yaml": b"format: 1\n\x00\x01\x02\xff",
    "latin1.yaml": "format: 1\nnotes: caf\xe9\n".encode("latin-1"),
    "deep.json": b"[" * 100_000 + b"]" * 100_000,
    "bomb.yaml": b"a: &a [1, 2]\nb: [*a, *a, *a]\n",
    "tag.yaml": b"format: !!python/object/apply:os.system ['true']\n",
    "key-newline.json": b'{"format": 1, "a\\nb\\u001b[31m": 1}',
    "huge-number.json": b'{"format": 1, "limbs": {"left": {"segments": {"CFA": {"psv": 1e999}}}}}',
    "utf16.json": '{"format": 1}'.encode("utf-16"),
    "empty.yaml": b"",
}
BAD_CRITERIA = {
    "criteria-not-a-map.yaml": b"- 1\n- 2\n",
    "criteria-bad-band.yaml": b"format: 1\nname: x\ntitle: x\nsource: x\nbands: [{id: a}]\n",
    "criteria-binary.yaml": b"\xff\xfe\x00",
}


def test_bad_inputs_never_print_a_traceback(tmp_path: Path) -> None:
    invalid = sorted(p for p in (ROOT / "tests" / "data" / "invalid").iterdir())
    sample = [p for p in invalid if p.suffix != ".expected"][::3]
    for name, data in {**BAD_TEXT, **BAD_CRITERIA}.items():
        (tmp_path / name).write_bytes(data)
    studies = [*sample, *(tmp_path / name for name in BAD_TEXT)]
    out = tmp_path / "out"
    out.mkdir()
    calls = [["check", str(p)] for p in studies]
    calls += [["draw", str(p), "-o", str(out / "m.pdf")] for p in studies[::4]]
    calls += [["criteria", "show", str(tmp_path / name)] for name in BAD_CRITERIA]
    calls += [["check", str(EXAMPLE), "--criteria", str(tmp_path / name)] for name in BAD_CRITERIA]
    calls += [["draw", str(EXAMPLE), "-o", str(tmp_path / "no" / "m.svg")]]
    for first in range(0, len(calls), 4):  # a few at a time: each is a cold start
        batch = [(args, limbchart(*args)) for args in calls[first : first + 4]]
        for args, proc in batch:
            _, err = proc.communicate(timeout=WAIT_SECONDS)
            assert "Traceback" not in err, (args, err)
            assert proc.returncode == 2, (args, err)
            assert err.strip(), args
            assert all(line.isprintable() for line in err.splitlines()), (args, err)
    assert len(calls) >= 30
    assert os.listdir(out) == []


def test_a_lone_surrogate_escape_is_refused_in_one_line(tmp_path: Path) -> None:
    # JSON allows "\ud800", which is no character: refused at load rather than dropped later
    study = tmp_path / "s.json"
    study.write_text('{"format": 1, "exam": {"indication": "a\\udfffb"}}')
    for fmt in ("json", "svg"):
        proc = limbchart("draw", str(study), "-o", str(tmp_path / f"m.{fmt}"))
        _, err = proc.communicate(timeout=WAIT_SECONDS)
        assert proc.returncode == 2
        assert err.strip().endswith(
            "exam.indication: holds an unpaired surrogate escape, which is not text."
        )
        assert "Traceback" not in err
    assert os.listdir(tmp_path) == ["s.json"]
