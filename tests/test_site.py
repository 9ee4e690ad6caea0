"""``sitegen build`` on small scenarios: files, cache, atomicity, failures, injection.

The browser checks of the same pages are in tests/test_site_browser.py. Here the
pages are parsed with html5lib, the HTML5 parsing algorithm browsers implement
(WHATWG HTML standard, sec. 13.2), in strict mode so any parse error fails.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import html5lib
import pytest
from scenario_support import BASE, toml_string, varied

from sitegen.pages.render import script_hash
from sitegen.site import build as site_build
from sitegen.site.build import MARKER, BuildError, build_site

POLICIES = (
    BASE
    + """
[[policies]]
name = "fixed catch of 90 kt"
values = { H = 90 }

[[policies]]
name = "fixed effort"
rate = "r*B*(1 - B/K) - F*B"
yield = "F*B"

[policies.parameters.F]
value = 0.1
unit = "1/yr"
name = "fishing mortality"
"""
)
BROKEN = varied('rate = "r*B*(1 - B/K) - H"', 'rate = "r*B*(1 - B/K) - Hx"')
NARRATIVE = (
    "# The year in short\n\nCatches held. <script>alert('brief')</script> "
    "[x](javascript:alert(1))\n"
)


def _folder(root: Path, files: dict[str, str]) -> Path:
    folder = root / "scenarios"
    folder.mkdir()
    for name, text in files.items():
        (folder / name).write_text(text, encoding="utf-8")
    return folder


def _snapshot(out: Path) -> dict[str, bytes]:
    return {
        p.relative_to(out).as_posix(): p.read_bytes() for p in sorted(out.rglob("*")) if p.is_file()
    }


@pytest.fixture(scope="module")
def site(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path, site_build.BuildReport]:
    root = tmp_path_factory.mktemp("site")
    folder = _folder(
        root,
        {"north-stock.toml": BASE, "south-stock.toml": POLICIES, "broken.toml": BROKEN,
         "brief.md": NARRATIVE},
    )  # fmt: skip
    out = root / "build"
    report = build_site([str(folder)], out, jobs=1, budget_s=5.0, version="test")
    return folder, out, report


def test_every_page_and_summary_is_written(site) -> None:
    _folder_, out, report = site
    names = {p.name for p in out.iterdir()}
    for name in ("index.html", "compare.html", "brief.html", "north-stock.html",
                 "north-stock.json", "south-stock.html", "south-stock.json", MARKER):  # fmt: skip
        assert name in names
    assert sorted(report.built) == ["broken", "north-stock", "south-stock"]
    assert [path for path, _ in report.failed] == [str(_folder_ / "broken.toml")]


def test_summary_is_the_analyse_json(site) -> None:
    from sitegen.dynamics.assess import assess
    from sitegen.dynamics.report import assessment_json
    from sitegen.scenario.loader import load_scenario

    folder, out, _ = site
    expected = assessment_json(assess(load_scenario(folder / "north-stock.toml"), 5.0))
    assert (out / "north-stock.json").read_text("utf-8") == expected + "\n"


def test_failed_scenario_is_listed_with_file_line_key_and_fix(site) -> None:
    _, out, _ = site
    index = (out / "index.html").read_text("utf-8")
    assert "broken.toml" in index and "Hx" in index
    assert "could not be built" in index
    assert 'href="north-stock.html"' in index and 'href="broken.html"' not in index


@pytest.mark.parametrize(
    "page", ["index.html", "compare.html", "brief.html", "north-stock.html", "south-stock.html"]
)
def test_pages_parse_without_errors_and_are_self_contained(site, page: str) -> None:
    _, out, _ = site
    text = (out / page).read_text("utf-8")
    parser = html5lib.HTMLParser(strict=True, namespaceHTMLElements=False)
    document = parser.parse(text)  # raises on the first parse error
    for element in document.iter():
        tag = str(element.tag).split("}")[-1]
        for name in ("src", "href", "xlink:href", "action", "data"):
            value = element.get(name)
            if value and tag != "a":
                assert value.startswith(("data:", "#")), f"{tag} {name}={value}"
        if tag == "a" and element.get("href"):
            href = element.get("href")
            assert not href.startswith(("http:", "https:", "//", "javascript:")), href
        if tag == "link":
            pytest.fail("pages must not link external resources")
    metas = [e for e in document.iter() if e.tag == "meta" and e.get("http-equiv")]
    policy = next(
        m.get("content") for m in metas if m.get("http-equiv") == "Content-Security-Policy"
    )
    assert "default-src 'none'" in policy
    scripts = [e for e in document.iter() if str(e.tag).endswith("script")]
    allowed = policy.split("script-src")[1].split(";")[0].split()
    assert len(allowed) == max(len(scripts), 1)
    for script in scripts:
        assert script_hash(script.text or "") in allowed, "every script is allowed by its hash"


def test_every_figure_has_a_text_alternative_and_a_data_table(site) -> None:
    _, out, _ = site
    parser = html5lib.HTMLParser(strict=True, namespaceHTMLElements=False)
    document = parser.parse((out / "south-stock.html").read_text("utf-8"))
    figures = [e for e in document.iter() if e.tag == "figure"]
    assert len(figures) >= 4
    for figure in figures:
        svgs = [e for e in figure.iter() if str(e.tag).endswith("svg")]
        assert len(svgs) == 1
        titles = [e for e in svgs[0].iter() if str(e.tag).endswith("title")]
        assert titles and titles[0].text, "every SVG has a title"
        assert any(e.tag == "table" for e in figure.iter()), "every figure has its data table"
        assert any(e.tag == "figcaption" for e in figure.iter())
    for image in [e for e in document.iter() if e.tag == "img"]:
        assert image.get("alt"), "every image has alternative text"


def test_dossier_sections_come_in_the_issue_order(site) -> None:
    _, out, _ = site
    text = (out / "south-stock.html").read_text("utf-8")
    order = ["id=\"model\"", "id=\"equilibria\"", "id=\"figures\"", "id=\"limits\"",
             "id=\"dynamics\"", "id=\"policies\"", "id=\"assumptions\"", "id=\"cautions\"",
             "id=\"method\""]  # fmt: skip
    positions = [text.index(marker) for marker in order]
    assert positions == sorted(positions)
    assert "<math" in text and 'display="block"' in text
    assert "judgement of qualified, licensed professionals" in text


def test_brief_narrative_is_sanitised(site) -> None:
    _, out, _ = site
    brief = (out / "brief.html").read_text("utf-8")
    assert "The year in short" in brief
    assert (
        "&lt;script&gt;alert(&#39;brief&#39;)&lt;/script&gt;" in brief or "&lt;script&gt;" in brief
    )
    assert "javascript:" not in brief
    assert "<script>alert" not in brief


def test_second_build_is_byte_identical_and_skips_analysis(site, tmp_path: Path) -> None:
    folder, out, _ = site
    before = _snapshot(out)
    report = build_site([str(folder)], out, jobs=1, budget_s=5.0, version="test")
    assert report.built == []
    assert sorted(report.reused) == ["broken", "north-stock", "south-stock"]
    assert _snapshot(out) == before


def test_changed_scenario_alone_is_rebuilt(tmp_path: Path) -> None:
    folder = _folder(tmp_path, {"a.toml": BASE, "b.toml": BASE})
    out = tmp_path / "out"
    build_site([str(folder)], out, jobs=2, budget_s=5.0, version="test")
    changed = varied('value = 100\nunit = "kt/yr"', 'value = 110\nunit = "kt/yr"')
    (folder / "b.toml").write_text(changed, "utf-8")
    report = build_site([str(folder)], out, jobs=2, budget_s=5.0, version="test")
    assert report.built == ["b"] and report.reused == ["a"]
    assert "110" in (out / "b.json").read_text("utf-8")


def test_failure_while_writing_leaves_the_old_site(site, tmp_path: Path, monkeypatch) -> None:
    folder, out, _ = site
    before = _snapshot(out)

    def explode(*_args, **_kwargs):
        raise KeyboardInterrupt  # as if the user pressed Ctrl-C while pages were written

    monkeypatch.setattr(site_build, "_write_site_pages", explode)
    with pytest.raises(KeyboardInterrupt):
        build_site([str(folder)], out, jobs=1, budget_s=5.0, version="test")
    assert _snapshot(out) == before
    assert not list(out.parent.glob(f".{out.name}.staging-*"))


def test_killed_build_leaves_the_old_site(tmp_path: Path) -> None:
    folder = _folder(tmp_path, {"a.toml": BASE})
    out = tmp_path / "out"
    build_site([str(folder)], out, jobs=1, budget_s=5.0, version="test")
    before = _snapshot(out)
    (folder / "a.toml").write_text(
        varied('value = 100\nunit = "kt/yr"', 'value = 105\nunit = "kt/yr"'), "utf-8"
    )
    command = [sys.executable, "-m", "sitegen", "build", str(folder), "--out", str(out),
               "--jobs", "1", "--quiet"]  # fmt: skip
    process = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    staging = f".{out.name}.staging-{process.pid}"
    deadline = time.monotonic() + 1.5
    # Kill it the moment it starts writing the new site (the most dangerous point), or
    # in the middle of its analysis if that moment is too short to catch.
    while process.poll() is None:
        if (out.parent / staging).exists() or time.monotonic() > deadline:
            os.kill(process.pid, signal.SIGKILL)
            break
        time.sleep(0.002)
    process.wait()
    assert process.returncode == -signal.SIGKILL, "the build ended before it could be killed"
    assert _snapshot(out) == before
    report = build_site([str(folder)], out, jobs=1, budget_s=5.0, version="test")
    assert report.built == ["a"]
    assert not list(out.parent.glob(f".{out.name}.*"))


def test_refuses_to_replace_a_folder_it_did_not_make(tmp_path: Path) -> None:
    folder = _folder(tmp_path, {"a.toml": BASE})
    precious = tmp_path / "documents"
    precious.mkdir()
    (precious / "report.docx").write_bytes(b"keep me")
    with pytest.raises(BuildError, match="did not write"):
        build_site([str(folder)], precious, jobs=1, version="test")
    assert (precious / "report.docx").read_bytes() == b"keep me"


def test_reserved_and_duplicate_names_are_failures(tmp_path: Path) -> None:
    folder = _folder(tmp_path, {"index.toml": BASE, "a.toml": BASE})
    other = tmp_path / "more"
    other.mkdir()
    (other / "a.toml").write_text(BASE, "utf-8")
    report = build_site([str(folder), str(other)], tmp_path / "out", jobs=1, version="test")
    messages = " ".join(message for _, message in report.failed)
    assert "taken by a site page" in messages and "same file name" in messages
    assert report.built == ["a"]


def test_scenario_text_cannot_inject_script(tmp_path: Path) -> None:
    attack = "<script>alert(1)</script><img src=x onerror=alert(2)>"
    text = varied('title = "Test stock under a catch limit"', f"title = {toml_string(attack)}")
    text = varied('name = "biomass"', f"name = {toml_string(attack)}", text)
    text = varied(
        'summary = "A logistic stock fished under a fixed catch."',
        "summary = " + toml_string(attack) + "\nnotes = "
        + toml_string("[x](javascript:alert(3)) <a href='javascript:alert(4)'>y</a> " + attack),
        text,
    )  # fmt: skip
    folder = _folder(tmp_path, {"attack.toml": text})
    out = tmp_path / "out"
    report = build_site([str(folder)], out, jobs=1, version="test")
    assert report.failed == []
    for page in ("attack.html", "index.html", "brief.html", "compare.html"):
        html = (out / page).read_text("utf-8")
        document = html5lib.parse(html, namespaceHTMLElements=False)
        for element in document.iter():
            assert not any(name.lower().startswith("on") for name in element.attrib), page
            assert not (element.get("href") or "").lower().startswith("javascript:"), page
            if element.tag == "script":
                assert "alert" not in (element.text or ""), page
        if page != "compare.html":  # the attack scenario has no policies to compare
            assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html, page


def test_cli_build_exit_codes(tmp_path: Path) -> None:
    folder = _folder(tmp_path, {"a.toml": BASE})
    out = tmp_path / "out"
    run = [sys.executable, "-m", "sitegen", "build", str(folder), "--out", str(out)]
    done = subprocess.run(run, capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    assert "1 built" in done.stdout
    (folder / "b.toml").write_text(BROKEN, "utf-8")
    done = subprocess.run(run, capture_output=True, text=True, timeout=300)
    assert done.returncode == 1 and "b.toml" in done.stderr and "Hx" in done.stderr
    assert "1 unchanged" in done.stdout
    missing = subprocess.run([*run[:4], str(tmp_path / "nowhere")], capture_output=True, text=True)
    assert missing.returncode == 2 and "no such file or folder" in missing.stderr


def test_card_is_plain_json(site) -> None:
    _, out, _ = site
    cards = [json.loads(p.read_text("utf-8")) for p in (out / ".cache").glob("*/card.json")]
    assert {c["slug"] for c in cards} == {"north-stock", "south-stock"}
    for card in cards:
        assert card["status"]["word"] and card["headline"]
