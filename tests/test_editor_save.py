"""Save keeps the study file's own text: comments, order, quoting, blank lines, untouched values.

Each edit of the table is made as the page makes it (the study fetched from the editor, changed,
posted to ``/api/save``) on a copy of every example study (all carry comments) with comments of
a sonographer's added, and on JSON copies. The saved file must differ from the original only in
lines that hold the edited values, keep every comment line, and load to the study the page
showed.
"""

from __future__ import annotations

import difflib
import json
import re
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import pytest

pytest.importorskip("starlette")
pytest.importorskip("ruamel.yaml")

from starlette.testclient import TestClient

from diagram import anatomy
from diagram.editor.app import TOKEN_HEADER, make_app
from diagram.editor.keep import keep_lines, yaml_indents
from diagram.editor.study_edit import open_study
from diagram.reading.load import load_study, load_study_text
from diagram.reading.plain import study_data

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted(p for p in (ROOT / "examples").glob("*.yaml"))
TOKEN = "t0k3n-for-tests"
HOST = "127.0.0.1:8765"
AUTH = {TOKEN_HEADER: TOKEN}
NOTE = "    # pt uncooperative, PT not seen"

Study = dict[str, Any]


def with_comments(text: str) -> str:
    """Return an example's text with comments and a blank line a sonographer might add."""
    lines = text.splitlines(keepends=True)
    out = []
    for line in lines:
        if line.startswith("format:"):
            line = line.rstrip("\n") + "   # study file format\n"
        if line.startswith("limbs:"):
            out.append("\n# findings by leg, scanned supine\n")
        out.append(line)
        if line.startswith("  right:") and out[-2].startswith("limbs:"):
            out.append(NOTE + "\n")
    out.append("# end of the findings\n")
    return "".join(out)


def first_segment(study: Study) -> tuple[str, str]:
    for side in ("right", "left"):
        segments = study.get("limbs", {}).get(side, {}).get("segments", {})
        if segments:
            return side, next(iter(segments))
    raise AssertionError("no segment in the example")


def missing_segment(study: Study) -> tuple[str, str]:
    for side in ("right", "left"):
        limb = study["limbs"].setdefault(side, {})
        have = {anatomy.resolve(k) for k in limb.get("segments", {})}
        for seg in anatomy.SEGMENT_IDS:
            if seg not in have and seg not in anatomy.UNPAIRED:
                return side, seg
    pytest.skip("the example records every segment: none to add")


# Each edit: (what it does to the page's study, a pattern every line it removes or adds matches).
Edit = tuple[Callable[[Study], None], str]


def change_psv(study: Study) -> None:
    side, seg = first_segment(study)
    study["limbs"][side]["segments"][seg]["psv"] = 123


def add_comment_field(study: Study) -> None:
    side, seg = first_segment(study)
    study["limbs"][side]["segments"][seg]["comment"] = "re-scanned, good window"


def add_segment(study: Study) -> None:
    side, seg = missing_segment(study)
    study["limbs"][side].setdefault("segments", {})[seg] = {"psv": 41}


def remove_segment(study: Study) -> None:
    side, seg = first_segment(study)
    del study["limbs"][side]["segments"][seg]


def add_lesion(study: Study) -> None:
    side, _ = first_segment(study)
    lesion = {"at": "POP-AK", "from_cm": 2.5, "length_cm": 1, "psv": 260, "edv": 30}
    study["limbs"][side].setdefault("lesions", []).append(lesion)


def remove_lesions(study: Study) -> None:
    if not any(limb.pop("lesions", None) for limb in study["limbs"].values()):
        pytest.skip("the example has no lesion to remove")


def change_pressure(study: Study) -> None:
    study.setdefault("pressures", {}).setdefault("brachial", {})["right"] = 131


def change_name(study: Study) -> None:
    study.setdefault("patient", {})["name"] = "Renamed, Demo"


def change_date(study: Study) -> None:
    study["exam"]["date"] = "2026-12-01"


EDITS: dict[str, Edit] = {
    "sample value": (change_psv, r"psv|comment|\{"),
    "sample field added": (add_comment_field, r"comment|\{"),
    "segment added": (add_segment, r"[A-Z]{2,}|psv"),
    "segment removed": (remove_segment, r"[A-Z]{2,}|psv|waveform|plaque|comment|edv|angle"),
    "lesion added": (add_lesion, r"lesions|at|from_cm|length_cm|psv|edv"),
    "lesions removed": (
        remove_lesions,
        r"lesions|at|from_cm|length_cm|psv|edv|occluded|reconstitutes|comment|proximal_psv|plaque|band",
    ),
    "pressure": (change_pressure, r"brachial|right"),
    "patient name": (change_name, r"name|patient"),
    "exam date": (change_date, r"date"),
}


@pytest.fixture
def saver(
    tmp_path: Path,
) -> Iterator[Callable[[str, str, Callable[[Study], None]], tuple[str, Study]]]:
    clients: list[TestClient] = []

    def save(text: str, name: str, edit: Callable[[Study], None]) -> tuple[str, Study]:
        path = tmp_path / name
        path.write_bytes(text.encode("utf-8"))
        prior = ROOT / "examples" / "followup-prior.yaml"  # the prior followup-current names
        if not (tmp_path / prior.name).exists():
            (tmp_path / prior.name).write_bytes(prior.read_bytes())
        client = TestClient(
            make_app(open_study(path), TOKEN, frozenset({HOST})), base_url=f"http://{HOST}"
        )
        clients.append(client)
        study = client.get("/api/study", headers=AUTH).json()["study"]
        edit(study)
        answer = client.post("/api/save", json={"study": study}, headers=AUTH)
        assert answer.status_code == 200, answer.json()
        return path.read_bytes().decode("utf-8"), study

    yield save
    for client in clients:
        client.close()


def changed_lines(original: str, saved: str) -> tuple[list[str], list[str]]:
    """Return the original's lines not in ``saved`` and the lines ``saved`` adds, by diff."""
    a, b = original.splitlines(), saved.splitlines()
    removed: list[str] = []
    added: list[str] = []
    for tag, i1, i2, j1, j2 in difflib.SequenceMatcher(None, a, b, autojunk=False).get_opcodes():
        if tag != "equal":
            removed += a[i1:i2]
            added += b[j1:j2]
    return removed, added


def same_study(saved: str, name: str, page: Study) -> None:
    suffix = Path(name).suffix
    shown = study_data(load_study_text(json.dumps(page), name, ".json"))
    assert study_data(load_study_text(saved, name, suffix)) == shown


def comment_lines(text: str) -> list[str]:
    return [ln for ln in text.splitlines() if ln.lstrip().startswith("#")]


@pytest.mark.parametrize("edit", list(EDITS), ids=list(EDITS))
@pytest.mark.parametrize("example", EXAMPLES, ids=[p.stem for p in EXAMPLES])
def test_save_changes_only_the_edited_lines_of_a_commented_yaml_file(
    saver: Any, example: Path, edit: str
) -> None:
    change, pattern = EDITS[edit]
    original = with_comments(example.read_text("utf-8"))
    saved, page = saver(original, example.name, change)
    same_study(saved, example.name, page)
    removed, added = changed_lines(original, saved)
    assert removed or added, "the edit changed nothing in the file"
    for line in removed + added:
        assert not line.lstrip().startswith("#"), f"a comment line changed: {line!r}"
        assert re.search(pattern, line), f"a line the edit does not concern changed: {line!r}"
    assert comment_lines(saved) == comment_lines(original)
    assert saved.count("\n\n") == original.count("\n\n")  # blank lines kept
    assert "   # study file format" in saved and NOTE in saved


@pytest.mark.parametrize("edit", ["sample value", "segment added", "lesion added", "pressure"])
@pytest.mark.parametrize("indent", [2, 4, "\t"], ids=["two", "four", "tab"])
def test_save_keeps_a_json_file_s_key_order_and_indentation(
    saver: Any, edit: str, indent: int | str
) -> None:
    data = json.loads(json.dumps(study_data(load_study(ROOT / "examples" / "normal.yaml"))))
    data = {"notes": "first on purpose", **{k: v for k, v in data.items() if k != "notes"}}
    original = json.dumps(data, indent=indent, ensure_ascii=False) + "\n"
    saved, page = saver(original, "normal.json", EDITS[edit][0])
    same_study(saved, "normal.json", page)
    assert list(json.loads(saved)) == list(data)  # the file's key order, not the schema's
    removed, added = changed_lines(original, saved)
    assert removed or added
    unit = indent if isinstance(indent, str) else " " * indent
    for line in removed + added:
        assert re.search(EDITS[edit][1] + r"|[{}\[\],]", line), line
        assert line == line.lstrip() or line.startswith(unit)
    assert all(ln.startswith(unit) for ln in saved.splitlines()[1:-1])


ODD = """\
# a file laid out by hand: four-space mappings, list dashes at the key's column
format: 1   # version
patient:
    name: 'Quoted, Single'    # single quotes
    sex: female
exam:
    date: 2026-11-27
    criteria: native

# pressures taken supine
pressures:
    brachial: {right: 144, left: 140}
    right:
        pt: 112   # pt uncooperative
        dp: 104
limbs:
    right:
        segments:
            CFA: {psv: 110, waveform: triphasic}
            # PT not seen
            SFA-P: {psv: 96, waveform: triphasic}
            sfa mid: {psv: 98}
        lesions:
        -   at: SFA-D   # first lesion
            psv: 300
        # second lesion
        -   at: POP-AK
            psv: 250
notes: "end"
# trailing comment
"""


def _psv_of_alias(study: Study) -> None:
    study["limbs"]["right"]["segments"]["SFA-M"]["psv"] = 250  # written "sfa mid" in the file


def _drop_first_lesion(study: Study) -> None:
    del study["limbs"]["right"]["lesions"][0]


def _insert_lesion(study: Study) -> None:
    study["limbs"]["right"]["lesions"].insert(1, {"at": "SFA-D", "psv": 200})


@pytest.mark.parametrize(
    ("change", "removed", "added"),
    [
        (_psv_of_alias, ["            sfa mid: {psv: 98}"], ["            sfa mid: {psv: 250}"]),
        (
            _drop_first_lesion,
            ["        -   at: SFA-D   # first lesion", "            psv: 300"],
            [],
        ),
        (_insert_lesion, [], ["        -   at: SFA-D", "            psv: 200"]),
        (
            change_name,
            ["    name: 'Quoted, Single'    # single quotes"],
            ["    name: 'Renamed, Demo'     # single quotes"],
        ),
    ],
    ids=["alias key kept", "first lesion removed", "lesion inserted", "quotes kept"],
)
def test_save_keeps_a_hand_laid_out_file(
    saver: Any, change: Callable[[Study], None], removed: list[str], added: list[str]
) -> None:
    saved, page = saver(ODD, "odd.yaml", change)
    same_study(saved, "odd.yaml", page)
    assert changed_lines(ODD, saved) == (removed, added)
    assert comment_lines(saved) == comment_lines(ODD)  # "# second lesion" stays before its lesion


def test_save_keeps_windows_line_ends_and_a_byte_order_mark(saver: Any) -> None:
    original = "\ufeff" + with_comments((ROOT / "examples" / "normal.yaml").read_text()).replace(
        "\n", "\r\n"
    )
    saved, page = saver(original, "normal.yaml", change_psv)
    same_study(saved, "normal.yaml", page)
    assert saved.startswith("\ufeff") and saved.count("\r\n") == saved.count("\n")
    removed, added = changed_lines(original, saved)
    assert len(removed) == len(added) == 1 and "123" in added[0]


@pytest.mark.parametrize(
    ("original", "base", "edited", "expected"),
    [
        ("a\nb\n", "a\nb\n", "a\nc\n", "a\nc\n"),  # the writer lays it out as the file
        ("x  \nb\nc\n", "x\nb\nc\n", "x\nb\nC\n", "x  \nb\nC\n"),  # kept: nothing changed there
        ("x  \nb\nc\n", "x\nb\nc\n", "X\nb\nc\n", "X\nb\nc\n"),  # changed there: written anew
        ("a\n---\nb\n", "a\nb\n", "a\nb\nz\n", "a\n---\nb\nz\n"),  # a line the writer drops
        ("a\n", "a\n", "", ""),
    ],
    ids=["same layout", "other layout kept", "other layout changed", "dropped line", "emptied"],
)
def test_keep_lines(original: str, base: str, edited: str, expected: str) -> None:
    assert keep_lines(original, base, edited) == expected


@pytest.mark.parametrize(
    ("text", "indents"),
    [
        ("a:\n  b: 1\nc:\n  - x\n", (2, 4, 2)),
        ("a:\n    b: 1\nc:\n-   x\n", (4, 4, 0)),
        ("a:\n   b: 1\nc:\n - x\n", (3, 3, 1)),
        ("a: 1\n", (2, 4, 2)),  # nothing nested: the examples' layout
    ],
)
def test_yaml_indents_are_read_from_the_file(text: str, indents: tuple[int, int, int]) -> None:
    assert yaml_indents(text) == indents


def test_save_refuses_to_replace_a_file_changed_since_it_was_opened(tmp_path: Path) -> None:
    path = tmp_path / "study.yaml"
    path.write_text(with_comments((ROOT / "examples" / "normal.yaml").read_text()), "utf-8")
    client = TestClient(
        make_app(open_study(path), TOKEN, frozenset({HOST})), base_url=f"http://{HOST}"
    )
    with client:
        study = client.get("/api/study", headers=AUTH).json()["study"]
        change_psv(study)
        changed_elsewhere = path.read_text("utf-8") + "# added in a text editor\n"
        path.write_text(changed_elsewhere, "utf-8")
        answer = client.post("/api/save", json={"study": study}, headers=AUTH)
        assert answer.status_code == 409
        assert "changed by another program" in answer.json()["problems"][0]["message"]
        assert path.read_text("utf-8") == changed_elsewhere
        answer = client.post("/api/save", json={"study": study, "confirm": True}, headers=AUTH)
        assert answer.status_code == 200
        change_name(study)  # the next save starts from the text just written
        assert client.post("/api/save", json={"study": study}, headers=AUTH).status_code == 200
    assert "Renamed, Demo" in path.read_text("utf-8")


def test_the_writer_s_layout_is_taken_when_the_kept_lines_would_not_read_back() -> None:
    from diagram.editor.keep import kept_text

    text = (
        "format: 1\nnotes: x   # keep me\nlimbs:\n  right:\n    segments:\n      CFA: {psv: 90}\n"
    )
    before = study_data(load_study_text(text, "s.yaml", ".yaml"))
    after = json.loads(json.dumps(before))
    after["limbs"]["right"]["segments"]["CFA"]["psv"] = 95
    seen: list[str] = []

    def second_only(candidate: str) -> bool:  # refuse the first text offered
        seen.append(candidate)
        return len(seen) == 2

    out = kept_text(text, False, before, after, second_only)
    assert out == seen[1] and "# keep me" in out and "psv: 95" in out
    with pytest.raises(ValueError, match="does not read back"):
        kept_text(text, False, before, after, lambda candidate: False)


def test_save_writes_nothing_when_the_file_s_text_cannot_be_kept(tmp_path: Path) -> None:
    path = tmp_path / "claudicant.yaml"
    original = (ROOT / "examples" / "claudicant-sfa.yaml").read_text("utf-8")
    path.write_text(original, "utf-8")
    edited = open_study(path)
    edited.data["limbs"]["left"]["lesions"].append({"at": "POP-AK", "psv": 90})  # not in the text
    with TestClient(make_app(edited, TOKEN, frozenset({HOST})), base_url=f"http://{HOST}") as c:
        study = c.get("/api/study", headers=AUTH).json()["study"]
        del study["limbs"]["left"]["lesions"][-1]
        answer = c.post("/api/save", json={"study": study}, headers=AUTH)
    assert answer.status_code == 422
    assert "its own text could not be kept" in answer.json()["problems"][0]["message"]
    assert path.read_text("utf-8") == original
