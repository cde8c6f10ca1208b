"""The editor end to end in headless Chromium (Debian's chromium and chromium-driver, via Selenium).

The command is started as a user starts it; the browser opens the address it prints, a vessel is
clicked, a velocity typed, the map is watched change, a lesion is placed by a click on the
vessel, the study is saved and the file read back with the study loader. Nothing is downloaded:
the browser and its driver are the system's (``.ci/run`` installs them). A screenshot of the page
is left in the test's folder (and, with ``LIMBCHART_EDITOR_SCREENSHOT=PATH``, also at PATH).
"""

from __future__ import annotations

import os
import shutil
import signal
import subprocess
import sys
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import pytest

pytest.importorskip("starlette")
pytest.importorskip("ruamel.yaml")  # the edit extra: Save keeps the file's own text
webdriver = pytest.importorskip("selenium.webdriver")

from selenium.webdriver.chrome.service import Service  # noqa: E402
from selenium.webdriver.common.actions.action_builder import ActionBuilder  # noqa: E402
from selenium.webdriver.common.by import By  # noqa: E402
from selenium.webdriver.common.keys import Keys  # noqa: E402
from selenium.webdriver.support.ui import WebDriverWait  # noqa: E402

from diagram import anatomy  # noqa: E402
from diagram.anatomy import Side  # noqa: E402
from diagram.reading.load import load_study  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"
CHROMEDRIVER = shutil.which("chromedriver") or "/usr/bin/chromedriver"
# The flags headless Chromium needs on a closed network: no background connections, no updates.
FLAGS = (
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--disable-dev-shm-usage",
    "--window-size=1500,1100",
)
MISSING = not (Path(CHROMIUM).exists() and Path(CHROMEDRIVER).exists())
if MISSING and os.environ.get("CI"):
    pytest.fail("CI installs chromium and chromium-driver; they are missing", pytrace=False)
pytestmark = pytest.mark.skipif(
    MISSING, reason="Debian's chromium and chromium-driver not installed"
)

VESSEL = '#map polygon[data-side="{side}"][data-segment="{segment}"]'
# a point on the tube at fraction f of its outline: outline points run down one edge and back up
# the other, so point i and point n-1-i face each other across the vessel
POINT_ON_TUBE = """
const el = document.querySelector(arguments[0]);
const pts = el.points, n = pts.numberOfItems, i = Math.round(arguments[1] * (n / 2 - 1));
const a = pts.getItem(i), b = pts.getItem(n - 1 - i);
const p = el.ownerSVGElement.createSVGPoint();
p.x = (a.x + b.x) / 2; p.y = (a.y + b.y) / 2;
const s = p.matrixTransform(el.getScreenCTM());
return [s.x, s.y];
"""


@contextmanager
def running_editor(study: Path) -> Iterator[str]:
    """Run ``limbchart edit STUDY --no-browser`` and yield the page's address; stop it with
    Ctrl-C afterwards and expect no traceback."""
    process = subprocess.Popen(
        [sys.executable, "-m", "diagram", "edit", str(study), "--no-browser"],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    assert process.stdout is not None
    url = process.stdout.readline().strip()
    try:
        assert url.startswith("http://127.0.0.1:"), url
        yield url
    finally:
        process.send_signal(signal.SIGINT)
        _, err = process.communicate(timeout=30)
        assert "Traceback" not in err, err


@pytest.fixture
def editor(tmp_path: Path) -> Iterator[tuple[str, Path]]:
    study = tmp_path / "claudicant.yaml"
    shutil.copy(ROOT / "examples" / "claudicant-sfa.yaml", study)
    with running_editor(study) as url:
        yield url, study


@pytest.fixture
def browser(monkeypatch: pytest.MonkeyPatch) -> Iterator[Any]:
    monkeypatch.setenv("SE_OFFLINE", "true")  # Selenium Manager must not fetch a driver
    options = webdriver.ChromeOptions()
    options.binary_location = CHROMIUM
    for flag in FLAGS:
        options.add_argument(flag)
    profile = tempfile.mkdtemp(prefix="limbchart-chromium-")
    options.add_argument(f"--user-data-dir={profile}")
    options.set_capability("goog:loggingPrefs", {"browser": "ALL"})
    driver = webdriver.Chrome(service=Service(CHROMEDRIVER), options=options)
    try:
        yield driver
    finally:
        driver.quit()
        shutil.rmtree(profile, ignore_errors=True)


def wait(driver: Any, condition: Any, seconds: float = 20) -> Any:
    return WebDriverWait(driver, seconds, poll_frequency=0.05).until(condition)


def click_on_vessel(driver: Any, side: str, segment: str, fraction: float) -> None:
    selector = VESSEL.format(side=side, segment=segment)
    driver.execute_script(
        "document.querySelector(arguments[0]).scrollIntoView({block: 'center'})", selector
    )
    x, y = driver.execute_script(POINT_ON_TUBE, selector, fraction)  # viewport coordinates
    actions = ActionBuilder(driver)
    actions.pointer_action.move_to_location(round(x), round(y)).click()
    actions.perform()


# read in one script: the map is swapped as a whole, so a found element may be gone a moment later
def fill_of(driver: Any, side: str, segment: str) -> str:
    selector = VESSEL.format(side=side, segment=segment)
    script = (
        "const el = document.querySelector(arguments[0]); return el && el.getAttribute('fill');"
    )
    return str(driver.execute_script(script, selector))


def label_text(driver: Any, side: str, segment: str) -> str:
    selector = f'#map g.label[data-side="{side}"][data-segment="{segment}"] text'
    script = "const el = document.querySelector(arguments[0]); return el && el.textContent;"
    return str(driver.execute_script(script, selector))


def test_type_a_velocity_see_the_map_change_add_a_lesion_and_save(
    editor: tuple[str, Path], browser: Any, tmp_path: Path
) -> None:
    url, study_file = editor
    browser.get(url)
    wait(
        browser,
        lambda d: d.find_elements(By.CSS_SELECTOR, VESSEL.format(side="right", segment="SFA-M")),
    )
    assert fill_of(browser, "right", "SFA-M") == "url(#band-normal)"
    assert label_text(browser, "right", "SFA-M") == "SFA-M 90"

    # click the right SFA-M on the map: the card shows it, its PSV field holds the file's 90
    click_on_vessel(browser, "right", "SFA-M", 0.5)
    wait(browser, lambda d: d.find_element(By.ID, "segment-title").text == "Right SFA-M")
    psv = browser.find_element(By.CSS_SELECTOR, 'input[name="psv"]')
    assert psv.get_attribute("value") == "90"
    devices = browser.find_element(By.ID, "device-list").text
    assert devices == "No stent or graft recorded in the right leg."

    # 200 cm/s over SFA-P's 96: Vr 2.08, in 50-74% (Vr 2.0 to < 4; Jager 1985, Polak 2004, the
    # native criteria set)
    psv.send_keys(Keys.CONTROL, "a")
    psv.send_keys("200")
    wait(browser, lambda d: fill_of(d, "right", "SFA-M") == "url(#band-50-74)")
    assert label_text(browser, "right", "SFA-M") == "SFA-M 200"
    badge = browser.find_element(By.CSS_SELECTOR, "#segment-result .band")
    assert badge.get_attribute("data-band") == "50-74" and badge.text == "50-74%"
    shown = browser.find_element(By.ID, "segment-result").text
    assert "Vr 2.08" in shown and shown.count("Vr 2.08") == 1, shown  # the ratio named once
    assert browser.find_element(By.ID, "status").text == "unsaved changes"
    # indices keep two decimals, as on the sheet: left ankle 96 / brachial 138 = 0.696 (common practice)
    legs = browser.find_element(By.ID, "legs").text
    assert "ABI 0.70 abnormal (PT 96 / brachial 138 mmHg)" in legs
    assert "ABI 1.03 normal" in legs
    assert "not a substitute" in browser.find_element(By.ID, "page-caution").text

    # a typo gets the loader's own message beside the field, and the map keeps its last drawing
    edv = browser.find_element(By.CSS_SELECTOR, 'input[name="edv"]')
    edv.send_keys("4o")
    note = wait(browser, lambda d: d.find_elements(By.CSS_SELECTOR, ".problem-note"))
    assert note[0].text == "claudicant.yaml: limbs.right.segments.SFA-M.edv: '4o' must be a number."
    edv.send_keys(Keys.BACKSPACE, Keys.BACKSPACE)
    wait(browser, lambda d: not d.find_elements(By.CSS_SELECTOR, ".problem-note"))

    # add a lesion where the vessel is clicked, three quarters of the way down SFA-M
    lesions_drawn = len(browser.find_elements(By.CSS_SELECTOR, "#map g.lesions > *"))
    browser.find_element(By.CSS_SELECTOR, '[data-action="add-lesion"]').click()
    click_on_vessel(browser, "right", "SFA-M", 0.75)
    start = wait(
        browser, lambda d: d.find_elements(By.CSS_SELECTOR, '#lesion-list [data-field="from_cm"]')
    )
    from_cm = float(start[0].get_attribute("value"))
    assert from_cm == pytest.approx(0.75 * anatomy.SEGMENTS["SFA-M"].length_cm, abs=0.8)
    browser.switch_to.active_element.send_keys("2")  # the length field has the focus
    lesion_psv = browser.find_element(By.CSS_SELECTOR, '#lesion-list input[data-field="psv"]')
    lesion_psv.send_keys("320")
    wait(
        browser,
        lambda d: len(d.find_elements(By.CSS_SELECTOR, "#map g.lesions > *")) > lesions_drawn,
    )

    # the page warns before unsaved changes are lost
    prevented = browser.execute_script(
        "const e = new Event('beforeunload', {cancelable: true}); window.dispatchEvent(e);"
        " return e.defaultPrevented;"
    )
    assert prevented is True

    # the map shows the lesion's PSV once the last keystroke's preview is back
    wait(
        browser,
        lambda d: (
            "PSV 320"
            in d.execute_script("return arguments[0].textContent", d.find_element(By.ID, "map"))
        ),
    )

    browser.find_element(By.CSS_SELECTOR, '[data-action="save"]').click()
    wait(browser, lambda d: d.find_element(By.ID, "status").text == "saved claudicant.yaml")
    shot = tmp_path / "editor.png"
    browser.save_screenshot(str(shot))
    assert shot.stat().st_size > 10_000
    extra = os.environ.get("LIMBCHART_EDITOR_SCREENSHOT")
    if extra:
        shutil.copy(shot, extra)

    # keyboard: Enter walks on to the next segment in scan order
    psv = browser.find_element(By.CSS_SELECTOR, 'input[name="psv"]')
    psv.send_keys(Keys.ENTER)
    wait(browser, lambda d: d.find_element(By.ID, "segment-title").text == "Right SFA-D")
    assert browser.switch_to.active_element.get_attribute("name") == "psv"

    saved = load_study(study_file)
    right = saved.limbs[Side.RIGHT]
    assert right.segments["SFA-M"].psv == 200
    (lesion,) = right.lesions
    assert (lesion.at, lesion.from_cm, lesion.length_cm, lesion.psv) == ("SFA-M", from_cm, 2, 320)
    left = saved.limbs[Side.LEFT]
    assert left.lesions[0].psv == 385  # the rest of the study is as it was

    errors = [e for e in browser.get_log("browser") if e["level"] == "SEVERE"]
    assert errors == []


def title(driver: Any) -> str:
    return str(driver.find_element(By.ID, "segment-title").text)


def test_keyboard_walks_the_segments_in_scan_order(editor: tuple[str, Path], browser: Any) -> None:
    url, _ = editor
    browser.get(url)
    wait(browser, lambda d: d.find_elements(By.CSS_SELECTOR, "#map svg"))
    assert browser.find_element(By.ID, "segment-title").text == "AO"
    browser.find_element(By.CSS_SELECTOR, 'input[name="psv"]').click()
    seen = ["AO"]
    for _ in range(4):
        before = seen[-1]
        browser.switch_to.active_element.send_keys(Keys.ENTER)
        wait(browser, lambda d: title(d) != before)  # noqa: B023 (waited on at once)
        seen.append(title(browser))
    assert seen == ["AO", "Right CIA", "Right IIA", "Right EIA", "Right CFA"]
    # Tab through the sample's six fields: past the last one it moves on too
    for _ in range(6):
        browser.switch_to.active_element.send_keys(Keys.TAB)
    wait(browser, lambda d: d.find_element(By.ID, "segment-title").text == "Right PFA")
    assert browser.switch_to.active_element.get_attribute("name") == "psv"
    browser.switch_to.active_element.send_keys(Keys.SHIFT, Keys.ENTER)
    wait(browser, lambda d: d.find_element(By.ID, "segment-title").text == "Right CFA")
    errors = [e for e in browser.get_log("browser") if e["level"] == "SEVERE"]
    assert errors == []


def test_a_new_study_typed_from_empty_is_saved_and_exported_as_pdf(
    tmp_path: Path, browser: Any
) -> None:
    import io

    from pypdf import PdfReader

    downloads = tmp_path / "downloads"
    downloads.mkdir()
    browser.execute_cdp_cmd(
        "Browser.setDownloadBehavior", {"behavior": "allow", "downloadPath": str(downloads)}
    )
    study_file = tmp_path / "new-exam.yaml"
    with running_editor(study_file) as url:
        browser.get(url)
        wait(browser, lambda d: d.find_elements(By.CSS_SELECTOR, "#map svg"))
        assert fill_of(browser, "right", "CFA") == "url(#band-not-assessed)"
        # keyboard only: walk from the aorta to the right CFA and type its sample
        browser.find_element(By.CSS_SELECTOR, 'input[name="psv"]').click()
        for _ in range(4):
            browser.switch_to.active_element.send_keys(Keys.ENTER)
        wait(browser, lambda d: title(d) == "Right CFA")
        browser.switch_to.active_element.send_keys("110", Keys.TAB, Keys.TAB, "t")  # triphasic
        wait(browser, lambda d: fill_of(d, "right", "CFA") != "url(#band-not-assessed)")
        browser.find_element(By.CSS_SELECTOR, '[data-action="save"]').click()
        prompt = wait(browser, lambda d: d.switch_to.alert)  # a new file: its name is asked
        prompt.accept()
        wait(browser, lambda d: d.find_element(By.ID, "status").text == "saved new-exam.yaml")
        browser.find_element(By.CSS_SELECTOR, '[data-action="export"]').click()  # PDF chosen
        pdf = downloads / "new-exam.pdf"
        wait(browser, lambda d: pdf.exists() and pdf.stat().st_size > 1000, 60)
        errors = [e for e in browser.get_log("browser") if e["level"] == "SEVERE"]
        assert errors == []
    saved = load_study(study_file)
    cfa = saved.limbs[Side.RIGHT].segments["CFA"]
    assert (cfa.psv, cfa.waveform) == (110, "triphasic")
    data = pdf.read_bytes()
    assert data[:5] == b"%PDF-"
    assert "CFA 110" in PdfReader(io.BytesIO(data)).pages[0].extract_text()


GRAFT_SITE = '#device-list [data-path="limbs.left.grafts.0.samples.{site}.{field}"]'
GRAFT_ON_MAP = '#map polygon[id$="graft-left-0-{site}"]'


def graft_fill(driver: Any, site: str) -> str:
    script = (
        "const el = document.querySelector(arguments[0]); return el && el.getAttribute('fill');"
    )
    return str(driver.execute_script(script, GRAFT_ON_MAP.format(site=site)))


def stent_pieces(driver: Any) -> int:
    return int(driver.execute_script("return document.querySelectorAll('#map g.stent').length"))


def test_edit_a_graft_and_a_stent_the_map_redraws_and_save_keeps_the_comments(
    tmp_path: Path, browser: Any
) -> None:
    from diagram.inputs import assess_file

    text = (ROOT / "examples" / "stent-and-graft.yaml").read_text("utf-8")
    text = text.replace("pressures:\n", "pressures:   # supine, after 10 min rest\n", 1)
    text = text.replace(
        "    grafts:\n", "    # graft scanned with the linear probe\n    grafts:\n", 1
    )
    study_file = tmp_path / "stent-and-graft.yaml"
    study_file.write_text(text, "utf-8")
    with running_editor(study_file) as url:
        browser.get(url)
        wait(browser, lambda d: d.find_elements(By.CSS_SELECTOR, "#map svg"))
        assert graft_fill(browser, "distal_anastomosis").endswith("band-graft-highest)")

        # the left leg's graft: its fields are on the page, filled from the file
        click_on_vessel(browser, "left", "CFA", 0.5)
        wait(browser, lambda d: title(d) == "Left CFA")
        heading = browser.find_element(By.ID, "device-title").text
        assert heading == "Stents and grafts, left leg"
        graft = browser.find_element(By.CSS_SELECTOR, '#device-list [data-device="grafts"]')
        assert graft.find_element(By.TAG_NAME, "legend").text == "Graft 1 (left leg)"
        # keyboard: Alt+D from the sample's PSV goes to the first field of the leg's devices
        browser.find_element(By.CSS_SELECTOR, 'input[name="psv"]').send_keys(Keys.ALT, "d")
        focused = browser.switch_to.active_element
        assert focused.get_attribute("data-path") == "limbs.left.grafts.0.conduit"
        psv = browser.find_element(
            By.CSS_SELECTOR, GRAFT_SITE.format(site="distal_anastomosis", field="psv")
        )
        assert psv.get_attribute("value") == "325"
        shown = graft.find_element(By.CSS_SELECTOR, ".device-result .band")
        assert shown.get_attribute("data-band") == "graft-highest"

        # type a lower PSV at the distal anastomosis: the graft is graded and redrawn at once
        psv.send_keys(Keys.CONTROL, "a")
        psv.send_keys("150")
        wait(browser, lambda d: not graft_fill(d, "distal_anastomosis").endswith("highest)"))
        note = browser.find_element(By.CSS_SELECTOR, GRAFT_SITE.format(site="mid", field="comment"))
        note.send_keys("valve site")
        band = wait(
            browser,
            lambda d: d.find_element(
                By.CSS_SELECTOR, '#device-list [data-device="grafts"] .device-result .band'
            ).get_attribute("data-band"),
        )
        assert band != "graft-highest"

        # the right leg's stent: carry it on to the above-knee popliteal, one piece more drawn
        click_on_vessel(browser, "right", "SFA-M", 0.5)
        wait(browser, lambda d: title(d) == "Right SFA-M")
        pieces = stent_pieces(browser)
        to = browser.find_element(By.CSS_SELECTOR, '[data-path="limbs.right.stents.0.to"]')
        assert to.get_attribute("value") == "SFA-D"
        to.send_keys("POP-AK")  # keyboard choice in the list
        length = browser.find_element(
            By.CSS_SELECTOR, '[data-path="limbs.right.stents.0.length_cm"]'
        )
        length.send_keys(Keys.CONTROL, "a")
        length.send_keys("25")
        wait(browser, lambda d: stent_pieces(d) > pieces)

        # keyboard: Add stent, its From list has the focus; a stent from CFA to SFA-M is refused
        # beside its field ("to" must be downstream), then Remove takes it away again
        browser.find_element(By.CSS_SELECTOR, '[data-action="add-stent"]').send_keys(Keys.ENTER)
        wait(
            browser, lambda d: len(d.find_elements(By.CSS_SELECTOR, '[data-device="stents"]')) == 2
        )
        focused = browser.switch_to.active_element
        assert focused.get_attribute("data-path") == "limbs.right.stents.1.from"
        focused.send_keys("POP-BK")
        note = wait(browser, lambda d: d.find_elements(By.CSS_SELECTOR, ".problem-note"))
        assert note[0].text == (
            "stent-and-graft.yaml: limbs.right.stents[1].to: 'SFA-M' is not POP-BK or "
            "downstream of it: a stent runs down one path."
        )
        to_field = browser.find_element(By.CSS_SELECTOR, '[data-path="limbs.right.stents.1.to"]')
        assert "has-problem" in to_field.get_attribute("class")  # beside the field it concerns
        remove = browser.find_elements(By.CSS_SELECTOR, '[data-action="remove-device"]')[1]
        remove.send_keys(Keys.ENTER)
        wait(browser, lambda d: not d.find_elements(By.CSS_SELECTOR, ".problem-note"))
        wait(browser, lambda d: stent_pieces(d) > pieces)  # the preview of the study as saved

        browser.find_element(By.CSS_SELECTOR, '[data-action="save"]').click()
        wait(
            browser, lambda d: d.find_element(By.ID, "status").text == "saved stent-and-graft.yaml"
        )
        shot = tmp_path / "editor-devices.png"
        browser.save_screenshot(str(shot))
        assert shot.stat().st_size > 10_000
        errors = [e for e in browser.get_log("browser") if e["level"] == "SEVERE"]
        assert errors == []

    saved_text = study_file.read_text("utf-8")
    assert "pressures:   # supine, after 10 min rest\n" in saved_text
    assert "    # graft scanned with the linear probe\n    grafts:\n" in saved_text
    assert saved_text.startswith("# Fictional demo: surveillance after revascularisation")
    changed = [
        (a, b) for a, b in zip(text.splitlines(), saved_text.splitlines(), strict=True) if a != b
    ]
    assert changed == [
        (
            "      - {from: SFA-M, to: SFA-D, from_cm: 4, length_cm: 12}",
            "      - {from: SFA-M, to: POP-AK, from_cm: 4, length_cm: 25}",
        ),
        ("          mid: {psv: 44}", "          mid: {psv: 44, comment: valve site}"),
        (
            "          distal_anastomosis: {psv: 325, edv: 60}",
            "          distal_anastomosis: {psv: 150, edv: 60}",
        ),
    ]
    saved = load_study(study_file)
    assert saved.limbs[Side.RIGHT].stents[0].to == "POP-AK"
    assert saved.limbs[Side.LEFT].grafts[0].samples["distal_anastomosis"].psv == 150
    assert saved.limbs[Side.LEFT].grafts[0].samples["mid"].comment == "valve site"
    assert assess_file(study_file).limbs[Side.LEFT].grafts[0].band == band
