"""The editor's HTTP API with Starlette's test client: every route, the guard, limits, saving, export.

The study bodies the loader's fuzz tests make (tests/test_fuzz.py) are posted here as JSON: the
editor must answer each with the results or with the problems, never with a server error (the
test client re-raises any exception a route lets out).
"""

from __future__ import annotations

import io
import json
import shutil
import signal
import subprocess
import sys
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

pytest.importorskip("starlette")
pytest.importorskip("uvicorn")
pytest.importorskip("ruamel.yaml")  # the edit extra: Save keeps the file's own text

from hypothesis import given, settings
from hypothesis import strategies as st
from starlette.testclient import TestClient
from test_fuzz import cases, garbage_studies, mutated_studies

from diagram import anatomy
from diagram._version import __version__
from diagram.drawing.template.mapfile import load_template
from diagram.editor.app import TOKEN_HEADER, make_app
from diagram.editor.study_edit import MAX_BODY, EditedStudy, open_study
from diagram.inputs import assess_file
from diagram.output.results import results_document
from diagram.reading.load import load_study

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"
TOKEN = "t0k3n-for-tests"
HOST = "127.0.0.1:8765"
HOSTS = frozenset({HOST, "localhost:8765"})
AUTH = {TOKEN_HEADER: TOKEN}
POSTS = ("/api/assess", "/api/preview", "/api/draw", "/api/locate", "/api/save")
GETS = ("/", "/static/editor.js", "/static/editor.css", "/api/study")


def client_for(edited: EditedStudy) -> TestClient:
    return TestClient(make_app(edited, TOKEN, HOSTS), base_url=f"http://{HOST}")


@pytest.fixture
def study_file(tmp_path: Path) -> Path:
    target = tmp_path / "claudicant.yaml"
    shutil.copy(EXAMPLES / "claudicant-sfa.yaml", target)
    return target


@pytest.fixture
def client(study_file: Path) -> Iterator[TestClient]:
    with client_for(open_study(study_file)) as c:
        yield c


def opened(client: TestClient) -> dict[str, Any]:
    answer = client.get("/api/study", headers=AUTH)
    assert answer.status_code == 200
    data: dict[str, Any] = answer.json()
    return data


def expected_results(path: Path) -> dict[str, Any]:
    return results_document(assess_file(path), version=__version__)


# --- the guard ----------------------------------------------------------------------------------


@pytest.mark.parametrize("path", GETS)
def test_every_page_and_file_needs_the_token(client: TestClient, path: str) -> None:
    assert client.get(path).status_code == 403
    assert client.get(path, headers={TOKEN_HEADER: "wrong"}).status_code == 403
    assert client.get(f"{path}?token=wrong").status_code == 403
    assert client.get(f"{path}?token={TOKEN}").status_code == 200
    assert client.get(path, headers=AUTH).status_code == 200


@pytest.mark.parametrize("path", POSTS)
def test_every_api_call_needs_the_token(client: TestClient, path: str) -> None:
    answer = client.post(path, json={"format": 1})
    assert answer.status_code == 403
    assert "token" in answer.text
    assert client.post(f"{path}?token=x{TOKEN}", json={"format": 1}).status_code == 403


def test_a_websocket_is_refused(client: TestClient) -> None:
    from starlette.websockets import WebSocketDisconnect

    with pytest.raises(WebSocketDisconnect), client.websocket_connect(f"/?token={TOKEN}"):
        pass


def test_token_twice_in_the_query_is_refused(client: TestClient) -> None:
    assert client.get(f"/api/study?token={TOKEN}&token={TOKEN}").status_code == 403


@pytest.mark.parametrize(
    ("host", "allowed"),
    [
        (HOST, True),
        ("localhost:8765", True),
        ("LOCALHOST:8765", True),
        ("127.0.0.1:8766", False),  # another port
        ("127.0.0.1", False),
        ("attacker.example:8765", False),  # a DNS name rebound to 127.0.0.1
        ("", False),
    ],
)
def test_the_host_header_must_name_the_editor(client: TestClient, host: str, allowed: bool) -> None:
    answer = client.get("/api/study", headers={**AUTH, "host": host})
    assert answer.status_code == (200 if allowed else 403)
    if not allowed:
        assert "Host" in answer.text


@pytest.mark.parametrize(
    ("origin", "allowed"),
    [
        (f"http://{HOST}", True),
        ("http://localhost:8765", True),
        ("http://attacker.example", False),
        ("https://127.0.0.1:8765", False),
        ("null", False),  # a sandboxed frame or a file: page
    ],
)
def test_a_request_from_another_site_is_refused(
    client: TestClient, origin: str, allowed: bool
) -> None:
    answer = client.post("/api/assess", json={"format": 1}, headers={**AUTH, "origin": origin})
    assert answer.status_code == (200 if allowed else 403)


def test_answers_are_not_cached_and_carry_a_strict_policy(client: TestClient) -> None:
    answer = client.get("/", headers=AUTH)
    assert answer.headers["cache-control"] == "no-store"
    assert answer.headers["referrer-policy"] == "no-referrer"
    assert "script-src 'self'" in answer.headers["content-security-policy"]
    assert "default-src 'none'" in answer.headers["content-security-policy"]
    assert "script-src 'self';" in answer.headers["content-security-policy"]  # no inline script


def test_the_page_carries_the_hooks_and_no_outside_address(client: TestClient) -> None:
    page = client.get("/", headers=AUTH).text
    for hook in ('name="psv"', 'name="edv"', 'name="waveform"', 'name="angle"'):
        assert hook in page
    assert 'data-action="save"' in page
    assert TOKEN in page
    script = client.get("/static/editor.js", headers=AUTH).text
    style = client.get("/static/editor.css", headers=AUTH).text
    for text in (page, script, style):
        assert "http://" not in text and "https://" not in text  # nothing fetched from outside


def test_only_the_shipped_files_are_served(client: TestClient) -> None:
    for name in ("editor.html", "..%2Fapp.py", "../app.py", "app.py", "editor.js.map"):
        assert client.get(f"/static/{name}", headers=AUTH).status_code == 404


# --- limits and hostile bodies ---------------------------------------------------------------


@pytest.mark.parametrize("path", POSTS)
def test_a_body_over_the_limit_is_refused(client: TestClient, path: str) -> None:
    big = b'{"format": 1, "notes": "' + b"x" * MAX_BODY + b'"}'
    answer = client.post(path, content=big, headers={**AUTH, "content-type": "application/json"})
    assert answer.status_code == 413
    assert "size limit" in answer.json()["problems"][0]["message"]


def test_a_streamed_body_over_the_limit_is_refused(client: TestClient) -> None:
    def chunks() -> Iterator[bytes]:  # no content-length: the limit is counted as it arrives
        yield b'{"format": 1, "notes": "'
        for _ in range(MAX_BODY // 65536 + 2):
            yield b"x" * 65536
        yield b'"}'

    headers = {**AUTH, "content-type": "application/json"}
    answer = client.post("/api/assess", content=chunks(), headers=headers)
    assert answer.status_code == 413


@pytest.mark.parametrize("path", POSTS)
def test_only_json_is_taken(client: TestClient, path: str) -> None:
    headers = {**AUTH, "content-type": "application/x-www-form-urlencoded"}
    answer = client.post(path, content=b"format=1", headers=headers)
    assert answer.status_code == 415


@pytest.mark.parametrize(
    ("body", "message"),
    [
        (b"", "new-study.yaml: (file): is empty."),
        (
            b"{",
            "new-study.yaml: (file): is not valid JSON: Expecting property name enclosed in double quotes.",
        ),
        (b"\xff\xfe", "new-study.yaml: (file): is not UTF-8 text (byte 0xff)."),
        (b"[1, 2]", None),
        (b'{"format": 1, "limbs": {"left": {"segments": {"SFA-X": {"psv": 90}}}}}', "did you mean"),
        (b'{"format": 1, "notes": "\\ud800"}', None),
        (b'{"format": 1, "pressures": {"brachial": {"right": NaN}}}', None),
        (b"[" * 5000 + b"]" * 5000, None),
        (b'{"format": 1, "notes": 1' + b"0" * 5000 + b"}", None),
    ],
)
def test_a_bad_body_gets_its_problems_in_the_loaders_words(
    body: bytes, message: str | None
) -> None:
    with client_for(open_study(None)) as c:
        headers = {**AUTH, "content-type": "application/json"}
        for path in ("/api/assess", "/api/preview", "/api/draw"):
            answer = c.post(path, content=body, headers=headers)
            # the page's live round trip answers problems with 200, the other routes with 422
            assert answer.status_code == (200 if path == "/api/preview" else 422), answer.text
            problems = answer.json()["problems"]
            assert problems
            for problem in problems:
                assert "\n" not in problem["message"]
                assert problem["message"].startswith("new-study.yaml: ")
            if message is not None:
                assert any(message in p["message"] for p in problems), problems


def test_a_problem_names_its_field_as_the_command_line_does(client: TestClient) -> None:
    study = opened(client)["study"]
    study["limbs"]["right"]["segments"]["SFA-M"]["psv"] = "ninety"
    study["limbs"]["left"]["lesions"][0]["edv"] = 900
    answer = client.post("/api/assess", json=study, headers=AUTH)
    assert answer.status_code == 422
    problems = {p["field"]: p["message"] for p in answer.json()["problems"]}
    assert problems["limbs.right.segments.SFA-M.psv"] == (
        "claudicant.yaml: limbs.right.segments.SFA-M.psv: 'ninety' must be a number."
    )
    assert "limbs.left.lesions[0].edv" in problems


def _post_tree(c: TestClient, tree: Any) -> int | None:
    """Post a tree to assess and preview; return the status of assess (None: not encodable)."""
    try:  # NaN and Infinity are written as such, as a hostile client could send them
        body = json.dumps(tree, ensure_ascii=False).encode("utf-8", "surrogatepass")
    except (ValueError, RecursionError):
        return None
    headers = {**AUTH, "content-type": "application/json"}
    statuses = []
    for path in ("/api/assess", "/api/preview"):
        answer = c.post(path, content=body, headers=headers)
        assert answer.status_code in (200, 422), answer.text
        data = answer.json()
        if "problems" in data:
            assert data["problems"] and "svg" not in data
            assert all("\n" not in p["message"] for p in data["problems"])
            statuses.append(422)
        else:
            if path == "/api/preview":
                assert data["svg"].startswith("<svg") and data["results"]["results_format"] == 1
            statuses.append(answer.status_code)
    assert statuses[0] == statuses[1]
    return statuses[0]


@settings(max_examples=cases(0.5))
@given(tree=garbage_studies())
def test_fuzz_garbage_studies_get_results_or_problems(tree: Any) -> None:
    with client_for(open_study(None)) as c:
        _post_tree(c, tree)


@settings(max_examples=cases(0.5))
@given(mutation=mutated_studies())
def test_fuzz_almost_valid_studies_get_results_or_problems(
    mutation: tuple[dict[str, Any], str, bool],
) -> None:
    tree, _, refused = mutation
    with client_for(open_study(None)) as c:
        status = _post_tree(c, tree)
    if refused and status is not None:
        assert status == 422  # the loader refuses it here as from a file


@settings(max_examples=cases(0.3))
@given(data=st.binary(max_size=2000))
def test_fuzz_random_bytes_get_problems(data: bytes) -> None:
    with client_for(open_study(None)) as c:
        headers = {**AUTH, "content-type": "application/json"}
        answer = c.post("/api/assess", content=data, headers=headers)
        assert answer.status_code in (200, 422)


# --- assess, preview, draw, locate --------------------------------------------------------------


@pytest.mark.parametrize("example", sorted(p.name for p in EXAMPLES.glob("*.yaml")))
def test_assess_gives_the_check_commands_results(tmp_path: Path, example: str) -> None:
    for name in EXAMPLES.glob("*.yaml"):  # a prior is named relative to its study
        shutil.copy(name, tmp_path / name.name)
    path = tmp_path / example
    with client_for(open_study(path)) as c:
        study = opened(c)["study"]
        answer = c.post("/api/assess", json=study, headers=AUTH)
    assert answer.status_code == 200
    assert answer.json() == expected_results(path)


def test_the_opened_study_and_the_scan_order(client: TestClient, study_file: Path) -> None:
    data = opened(client)
    assert data["name"] == "claudicant.yaml" and not data["new"]
    assert data["study"]["limbs"]["left"]["lesions"][0]["at"] == "SFA-M"
    order = [(s["side"], s["segment"]) for s in data["segments"]]
    assert order[0] == ("midline", "AO")  # aorta first, then the right leg from the iliacs down
    assert order[1:3] == [("right", "CIA"), ("right", "IIA")]
    right = [seg for side, seg in order if side == "right"]
    assert right == [s for s in anatomy.SEGMENT_IDS if s != "AO"]
    assert order.index(("right", "PLA")) < order.index(("left", "CIA"))
    assert len(order) == len(load_template(None).vessels)
    # the page's graft site fields are the loader's sites, inflow to outflow
    assert data["graft_sites"] == [
        "proximal_anastomosis",
        "proximal",
        "mid",
        "distal",
        "distal_anastomosis",
    ]


def test_preview_marks_every_drawn_segment(client: TestClient) -> None:
    import xml.etree.ElementTree as ET

    study = opened(client)["study"]
    answer = client.post("/api/preview", json=study, headers=AUTH)
    assert answer.status_code == 200
    data = answer.json()
    root = ET.fromstring(data["svg"])
    marked = [
        (el.get("data-side"), el.get("data-segment"))
        for el in root.iter("{http://www.w3.org/2000/svg}polygon")
        if el.get("data-segment") is not None
    ]
    expected = {(v.side or "midline", v.segment) for v in load_template(None).vessels.values()}
    assert len(marked) == len(expected) and set(marked) == expected
    assert data["results"]["limbs"]["left"]["segments"]["SFA-M"]["band"] == "75-99"
    assert data["map_box"][2] > 0 and data["map_box"][3] > 0


def test_preview_follows_a_change_of_psv(client: TestClient) -> None:
    study = opened(client)["study"]
    # SFA-P 96 cm/s upstream: 96 x 2.0 = 192 reaches the 50-74% band (Vr >= 2.0, below 4),
    # Jager 1985 / Polak 2004 as in the native criteria set
    study["limbs"]["right"]["segments"]["SFA-M"]["psv"] = 200
    data = client.post("/api/preview", json=study, headers=AUTH).json()
    assert data["results"]["limbs"]["right"]["segments"]["SFA-M"]["band"] == "50-74"
    assert 'data-segment="SFA-M" data-side="right" fill="url(#band-50-74)"' in data["svg"]


def test_draw_output_without_hooks_is_unchanged(study_file: Path) -> None:
    from diagram.output.svg import render_svg
    from diagram.pipeline import draw

    drawing = draw(load_study(study_file))
    assert drawing.scene is not None
    svg = drawing.svg
    assert "data-segment" not in svg and "data-side" not in svg
    # hooks only add attributes: take them out and the text is the draw command's, byte for byte
    marked = render_svg(drawing.scene, annotate=lambda item: {"data-x": "1"})
    assert marked != svg and marked.replace(' data-x="1"', "") == svg
    assert render_svg(drawing.scene, annotate=lambda item: None) == svg


@pytest.mark.parametrize("fmt", ["svg", "pdf", "png", "dcm", "json"])
def test_draw_returns_each_format_through_the_export_writers(client: TestClient, fmt: str) -> None:
    study = opened(client)["study"]
    answer = client.post(f"/api/draw?format={fmt}", json=study, headers=AUTH)
    assert answer.status_code == 200
    assert answer.headers["content-disposition"] == f'attachment; filename="claudicant.{fmt}"'
    data = answer.content
    if fmt == "svg":
        assert data.startswith(b"<?xml") and b"data-segment" not in data
    elif fmt == "pdf":
        from pypdf import PdfReader

        assert data[:5] == b"%PDF-"
        text = PdfReader(io.BytesIO(data)).pages[0].extract_text()
        assert "SFA-M" in text
    elif fmt == "png":
        from PIL import Image

        with Image.open(io.BytesIO(data)) as image:
            assert image.format == "PNG" and image.width > 500
    elif fmt == "dcm":
        import pydicom

        ds = pydicom.dcmread(io.BytesIO(data))
        assert ds.Modality == "DOC" and bytes(ds.EncapsulatedDocument)[:5] == b"%PDF-"
    else:
        assert json.loads(data) == expected_results(EXAMPLES / "claudicant-sfa.yaml")


def test_draw_refuses_an_unknown_format(client: TestClient) -> None:
    answer = client.post("/api/draw?format=exe", json={"format": 1}, headers=AUTH)
    assert answer.status_code == 400
    assert "is not one of" in answer.json()["problems"][0]["message"]


@pytest.mark.parametrize(
    ("segment", "fraction"),
    [("SFA-M", 0.0), ("SFA-M", 0.5), ("SFA-M", 1.0), ("POP-BK", 0.25), ("CFA", 0.75)],
)
def test_locate_turns_a_click_into_centimetres_along_the_segment(
    client: TestClient, segment: str, fraction: float
) -> None:
    study = opened(client)["study"]
    box = client.post("/api/preview", json=study, headers=AUTH).json()["map_box"]
    template = load_template(None)
    vessel = template.vessel("right", segment)
    tx, ty = vessel.geometry.point_at(fraction * vessel.geometry.length())
    vx, vy, vw, _ = template.viewbox
    scale = box[2] / vw
    # a click a little beside the centre line, as on the drawn tube
    x, y = box[0] + (tx - vx) * scale + 1.0, box[1] + (ty - vy) * scale
    body = {"side": "right", "segment": segment, "x": x, "y": y, "map_box": box}
    answer = client.post("/api/locate", json=body, headers=AUTH)
    assert answer.status_code == 200
    nominal = anatomy.SEGMENTS[segment].length_cm
    assert answer.json()["from_cm"] == pytest.approx(fraction * nominal, abs=0.3)


@pytest.mark.parametrize(
    "body",
    [
        {"side": "middle", "segment": "SFA-M", "x": 1, "y": 1, "map_box": [0, 0, 1, 1]},
        {"side": "right", "segment": "SFA-Q", "x": 1, "y": 1, "map_box": [0, 0, 1, 1]},
        {"side": "right", "segment": "SFA-M", "x": "1", "y": 1, "map_box": [0, 0, 1, 1]},
        {"side": "right", "segment": "SFA-M", "x": 1, "y": 1, "map_box": [0, 0, 0, 1]},
        {"side": "right", "segment": "SFA-M", "x": 1, "y": 1},
        [1, 2],
    ],
)
def test_locate_refuses_a_bad_request(client: TestClient, body: Any) -> None:
    answer = client.post("/api/locate", json=body, headers=AUTH)
    assert answer.status_code == 400
    assert answer.json()["problems"][0]["message"]


# --- saving -------------------------------------------------------------------------------------


def test_save_writes_the_opened_file_which_reloads_to_the_same_results(
    client: TestClient, study_file: Path
) -> None:
    study = opened(client)["study"]
    study["limbs"]["right"]["segments"]["SFA-M"]["psv"] = 200
    study["limbs"]["right"]["lesions"] = [{"at": "SFA-M", "from_cm": 4.5, "psv": 200}]
    results = client.post("/api/assess", json=study, headers=AUTH).json()
    answer = client.post("/api/save", json={"study": study}, headers=AUTH)
    assert answer.status_code == 200 and answer.json()["saved"] == "claudicant.yaml"
    assert sorted(p.name for p in study_file.parent.iterdir()) == ["claudicant.yaml"]
    assert expected_results(study_file) == results
    again = opened(client)
    assert again["study"]["limbs"]["right"]["lesions"] == [
        {"at": "SFA-M", "from_cm": 4.5, "psv": 200}
    ]


def test_save_with_problems_writes_nothing(client: TestClient, study_file: Path) -> None:
    before = study_file.read_bytes()
    study = opened(client)["study"]
    study["limbs"]["right"]["segments"]["SFA-M"]["psv"] = -5
    answer = client.post("/api/save", json={"study": study}, headers=AUTH)
    assert answer.status_code == 422
    assert answer.json()["problems"][0]["field"] == "limbs.right.segments.SFA-M.psv"
    assert study_file.read_bytes() == before


def test_save_as_never_replaces_another_file_unconfirmed(
    client: TestClient, study_file: Path
) -> None:
    other = study_file.parent / "other.yaml"
    other.write_text("format: 1\n", "utf-8")
    study = opened(client)["study"]
    answer = client.post("/api/save", json={"study": study, "name": "other.yaml"}, headers=AUTH)
    assert answer.status_code == 409 and answer.json()["conflict"] is True
    assert other.read_text("utf-8") == "format: 1\n"
    body = {"study": study, "name": "other.yaml", "confirm": True}
    assert client.post("/api/save", json=body, headers=AUTH).status_code == 200
    assert expected_results(other) == expected_results(study_file)
    assert opened(client)["name"] == "other.yaml"  # later saves go to the new name
    fresh = {"study": study, "name": "third.json"}
    assert client.post("/api/save", json=fresh, headers=AUTH).status_code == 200
    assert json.loads((study_file.parent / "third.json").read_text("utf-8"))["format"] == 1


@pytest.mark.parametrize(
    "name",
    [
        "../escape.yaml",
        "/tmp/escape.yaml",
        "sub/escape.yaml",
        "..",
        "notes.txt",
        "a\\b.yaml",
        "x\0.yaml",
    ],
)
def test_save_as_takes_only_a_plain_study_file_name(
    client: TestClient, study_file: Path, name: str
) -> None:
    study = opened(client)["study"]
    answer = client.post("/api/save", json={"study": study, "name": name}, headers=AUTH)
    assert answer.status_code == 422
    assert sorted(p.name for p in study_file.parent.iterdir()) == ["claudicant.yaml"]
    assert not (study_file.parent.parent / "escape.yaml").exists()


@pytest.mark.parametrize(
    "body",
    [b"[]", b'{"study": 3}', b'{"name": "x.yaml"}', b'{"study": {}, "name": 5}', b"{" * 3000],
)
def test_save_refuses_a_malformed_request(client: TestClient, body: bytes) -> None:
    headers = {**AUTH, "content-type": "application/json"}
    answer = client.post("/api/save", content=body, headers=headers)
    assert answer.status_code in (400, 422)
    assert answer.json()["problems"]


def test_a_new_study_is_saved_under_a_name_it_is_given(tmp_path: Path) -> None:
    edited = open_study(None)
    edited.folder = tmp_path
    with client_for(edited) as c:
        data = opened(c)
        assert data["new"] and data["study"] == {"format": 1, "exam": {"criteria": "native"}}
        study = data["study"]
        study["limbs"] = {"left": {"segments": {"CFA": {"psv": 100, "waveform": "triphasic"}}}}
        answer = c.post("/api/save", json={"study": study}, headers=AUTH)
        assert answer.status_code == 422
        assert "needs a file name" in answer.json()["problems"][0]["message"]
        answer = c.post("/api/save", json={"study": study, "name": "new.yaml"}, headers=AUTH)
        assert answer.status_code == 200
    saved = load_study(tmp_path / "new.yaml")
    assert saved.limbs[anatomy.Side.LEFT].segments["CFA"].psv == 100


def test_a_named_file_that_does_not_exist_yet_is_a_new_study(tmp_path: Path) -> None:
    target = tmp_path / "fresh.yaml"
    with client_for(open_study(target)) as c:
        data = opened(c)
        assert data["new"] and data["name"] == "fresh.yaml"
        answer = c.post("/api/save", json={"study": data["study"]}, headers=AUTH)
        assert answer.status_code == 200
    assert load_study(target).format == 1


# --- the command --------------------------------------------------------------------------------


def _start(args: list[str]) -> tuple[subprocess.Popen[str], str]:
    process = subprocess.Popen(
        [sys.executable, "-m", "diagram", "edit", *args, "--no-browser"],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    assert process.stdout is not None
    return process, process.stdout.readline().strip()


def test_the_command_prints_its_address_first_and_stops_on_ctrl_c(study_file: Path) -> None:
    import urllib.error
    import urllib.request

    process, url = _start([str(study_file)])
    try:
        assert url.startswith("http://127.0.0.1:") and "/?token=" in url
        with urllib.request.urlopen(url, timeout=10) as answer:
            assert answer.status == 200 and b'data-action="save"' in answer.read()
        with pytest.raises(urllib.error.HTTPError) as refused:
            urllib.request.urlopen(url.split("?")[0], timeout=10)
        assert refused.value.code == 403
        refused.value.close()
    finally:
        process.send_signal(signal.SIGINT)
        _, err = process.communicate(timeout=20)
    assert process.returncode == 130
    assert "Traceback" not in err and "interrupted" in err


def test_another_host_is_warned_about(study_file: Path) -> None:
    process, url = _start([str(study_file), "--host", "127.0.0.2"])
    process.send_signal(signal.SIGINT)
    _, err = process.communicate(timeout=20)
    assert url.startswith("http://127.0.0.2:")
    assert "warning: listening on 127.0.0.2, not only on this machine" in err


def test_a_study_with_problems_is_reported_as_check_does(tmp_path: Path) -> None:
    bad = tmp_path / "bad.yaml"
    bad.write_text("format: 1\nlimbs:\n  left:\n    segments:\n      SFA-Q: {psv: 90}\n", "utf-8")
    done = subprocess.run(
        [sys.executable, "-m", "diagram", "edit", str(bad), "--no-browser"],
        capture_output=True,
        text=True,
        timeout=60,
        check=False,
    )
    assert done.returncode == 2 and done.stdout == ""
    assert "SFA-Q" in done.stderr and "Traceback" not in done.stderr


@pytest.mark.parametrize("module", ["uvicorn", "ruamel.yaml"])
def test_the_command_says_how_to_install_what_it_misses(
    monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str], module: str
) -> None:
    import importlib.util

    from diagram.cli.main import main

    real = importlib.util.find_spec
    monkeypatch.setattr(
        importlib.util, "find_spec", lambda name, *a: None if name == module else real(name, *a)
    )
    with pytest.raises(SystemExit) as stop:
        main(["edit", "--no-browser"])
    assert stop.value.code == 1
    assert f"pip install 'limbchart[edit]' ({module} missing)" in capsys.readouterr().err


def test_a_structured_report_opens_and_is_saved_as_a_new_study_file(tmp_path: Path) -> None:
    report = tmp_path / "bilateral.dcm"
    shutil.copy(EXAMPLES / "sr" / "bilateral.dcm", report)
    before = report.read_bytes()
    with client_for(open_study(report)) as c:
        data = opened(c)
        assert data["new"] and data["name"] == "bilateral.yaml"
        assert data["study"]["limbs"]  # the report's velocities, placed by segment
        answer = c.post("/api/assess", json=data["study"], headers=AUTH)
        assert answer.status_code == 200
        assert answer.json()["limbs"] == expected_results(report)["limbs"]
        unnamed = c.post("/api/save", json={"study": data["study"]}, headers=AUTH)
        assert unnamed.status_code == 422  # never written over the report
        body = {"study": data["study"], "name": "bilateral.yaml"}
        assert c.post("/api/save", json=body, headers=AUTH).status_code == 200
    assert report.read_bytes() == before
    assert expected_results(tmp_path / "bilateral.yaml")["limbs"] == answer.json()["limbs"]
