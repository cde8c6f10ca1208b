"""The adversarial corpus through the teaching export: 0 leaks, and the harmless set exported.

Each study of tests/teach_corpus.py is exported in all five formats (free text withheld, the
default) and again with its free text kept (scrubbed, scanned, for review). Every output is read
back with tools nobody here wrote (tests/teach_readers.py: pdftotext, pdfinfo, pypdf, pydicom
over every element, Pillow, the raw bytes) and searched with the tests' own folding for what
was smuggled in and for the study's own values. Rules: HIPAA Safe Harbor, 45 CFR 164.514(b)(2).
"""

from __future__ import annotations

import json
import re
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest
import yaml
from teach_corpus import HARMLESS_NAMES, Entry, adversarial, fold, identity_values, study_data
from teach_readers import needs_poppler, output_text, run


def _harmless(folder: Path) -> dict[Path, str]:
    """Write the harmless studies: names the sheet prints, a site of common words, an MRN
    whose digits the sheet prints once punctuation is dropped."""
    from diagram.reading.load import load_study_text
    from diagram.teaching.case import CaseSettings, render_case

    base = yaml.safe_dump(study_data({}), allow_unicode=True)
    svg = render_case(
        load_study_text(base, "b.yaml", ".yaml"), "tc-bbbbb-bbbbb", CaseSettings(formats=("svg",))
    ).files["tc-bbbbb-bbbbb.svg"]
    figures = "".join(re.findall(r"\d", " ".join(re.findall(r">([^<]+)<", svg.decode()))))
    mrn = f"{figures[2:5]}-{figures[5:8]}"
    out = {}
    for k, name in enumerate((*HARMLESS_NAMES, "Quill, Ada", "Rowe, Ida")):
        who = {"name": name}
        if k == len(HARMLESS_NAMES):
            who["site"] = "Lower Limb Vascular Unit"
        if k == len(HARMLESS_NAMES) + 1:
            who["id"] = mrn
        path = folder / f"harmless-{k:02d}.yaml"
        path.write_text(yaml.safe_dump(study_data(who), allow_unicode=True), "utf-8")
        out[path] = name
    return out


def _write(folder: Path) -> tuple[dict[Path, Entry], dict[Path, str]]:
    folder.mkdir()
    entries = {}
    for k, entry in enumerate(adversarial()):
        path = folder / f"study-{k:03d}.yaml"
        data = study_data(entry.who, where=entry.where, text=entry.text)
        path.write_text(yaml.safe_dump(data, allow_unicode=True), "utf-8")
        entries[path] = entry
    return entries, _harmless(folder)


def _leaks(entry: Entry | None, text: str) -> list[str]:
    """Return what of the entry's smuggled text and identity is in ``text``."""
    folded = fold(text)
    found = [leak for leak in (entry.leaks if entry else ()) if fold(leak) in folded]
    who = entry.who if entry else {}
    found += [v for v in identity_values(who) if fold(v) in folded]
    name = str(who.get("name", "Quennell, Bartholomew"))
    for word in re.findall(r"[^\W\d_]{4,}", name):  # the name's words, whole
        if re.search(rf"(?<![^\W_]){re.escape(fold(word))}(?![^\W_])", folded):
            found.append(word)
    return found


def _check(out: Path, tmp: Path, sources: dict[str, Path], entries: dict[Path, Entry]) -> None:
    def one(path: Path) -> tuple[str, list[str]]:
        text, _ = output_text(path, tmp)
        return path.name, _leaks(entries.get(sources[path.name.split(".")[0]]), text)

    with ThreadPoolExecutor(max_workers=2) as pool:  # poppler runs as separate processes
        found = [r for r in pool.map(one, sorted(out.glob("tc-*"))) if r[1]]
    assert found == []


def _sources(link: Path) -> dict[str, Path]:
    return {
        case: Path(src) for case, src in (r.split("\t") for r in link.read_text().splitlines()[1:])
    }


@needs_poppler
def test_the_adversarial_corpus_leaks_nothing_in_any_format(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    entries, harmless = _write(tmp_path / "in")
    assert len(entries) >= 60 and len(harmless) == 14
    out, link = tmp_path / "out", tmp_path / "link.tsv"
    formats = [x for f in ("pdf", "svg", "png", "dcm", "yaml") for x in ("--format", f)]
    args = [str(tmp_path / "in"), "-o", str(out), "--link", str(link), "--dpi", "50", *formats]
    code, err = run([*args, "--jobs", "2", "--quiet"], capsys)
    total = len(entries) + len(harmless)
    assert code == 0 and f"{total} of {total} studies written" in err, err
    assert not any(leak in err for e in entries.values() for leak in e.leaks)
    sources = _sources(link)
    assert len(sources) == total and len(list(out.glob("tc-*"))) == total * 5
    _check(out, tmp_path, sources, entries)
    audit = json.loads((out / "audit.json").read_text())
    assert {c["free_text"]["kept_for_review"] for c in audit["cases"]} == {0}
    assert all(c["free_text"]["withheld"] >= 1 for c in audit["cases"])


def test_kept_free_text_is_scrubbed_or_the_case_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    entries, harmless = _write(tmp_path / "in")
    out, link, review = tmp_path / "out", tmp_path / "link.tsv", tmp_path / "review.txt"
    args = [str(tmp_path / "in"), "-o", str(out), "--link", str(link), "--keep-text"]
    args += ["--review", str(review), "--format", "svg", "--format", "yaml", "--jobs", "2"]
    code, _ = run([*args, "--quiet"], capsys)
    assert code in (0, 2)
    sources = _sources(link)
    written = set(sources.values())
    assert set(harmless) <= written  # the harmless set exported, free text and all
    _check(out, tmp_path, sources, entries)  # and nothing written leaks
    listed = review.read_text("utf-8")
    assert all(e.leaks[0] not in listed for p, e in entries.items())
    refused = [e.label for p, e in entries.items() if p not in written]
    print(f"kept free text: {len(refused)} of {len(entries)} adversarial studies refused")
