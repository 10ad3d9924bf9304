"""The report file (`save report`, `permq run --report`), the shell's `copy`, and exit codes."""
from __future__ import annotations

import hashlib
import shutil
import subprocess

import pytest
from prompt_toolkit.clipboard import InMemoryClipboard

import permq
from kinds import DEMO, LOADS
from permq.frontends.cli import main
from permq.frontends.shell.repl import Shell
from permq.pipeline import Session

SCRIPT = LOADS + """compare mass by recipe levels "A", "B" in trays
compare mass by recipe levels "A", "B" in trays using ranks sampled 2000 seed 9
count sprouted by dose in plots ordered
robustness compare mass by recipe levels "A", "B" in trays datasets 100 seed 5
compare mass, light by recipe levels "A", "B" in trays
compare mass by recipy in trays
"""


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    folder = tmp_path_factory.mktemp("report")
    for name in ("trays.csv", "seedlings.csv", "plots.csv", "doses.csv"):
        shutil.copy(DEMO / name, folder / name)
    (folder / "analysis.pq").write_text(SCRIPT + 'save report "saved.html"\n')
    page = folder / "page.html"
    code = main(["run", str(folder / "analysis.pq"), "--format", "json", "--report", str(page)])
    return folder, page, code


def test_the_report_page_holds_results_pictures_methods_files_and_seeds(report):
    folder, page, code = report
    assert code == 1                        # one statement failed; the report is still written
    html = page.read_text()
    assert html.startswith("<!DOCTYPE html>") and "<script" not in html
    assert "http://" not in html.replace('xmlns="http://www.w3.org/2000/svg"', "")
    assert "https://" not in html
    assert html.count('class="permq-result"') == 6
    assert html.count('<svg xmlns="http://www.w3.org/2000/svg" class="permq-null"') == 3
    assert "no picture: the null distribution is not kept" in html       # the network table
    assert 'class="permq-laws"' in html
    for name, rows in (("trays.csv", 19), ("seedlings.csv", 10), ("plots.csv", 20)):
        digest = hashlib.sha256((folder / name).read_bytes()).hexdigest()
        assert digest in html and f"<td>{rows:,}</td>" in html
    assert f"permq {permq.__version__}" in html
    assert "seed 9" in html and "seed 5" in html
    assert "Wilcoxon rank-sum test (Wilcoxon, 1945; Mann and Whitney, 1947)" in html
    assert "permutation test of the difference in means (Pitman) (Pitman, 1937)" in html
    assert "Phipson, B. and Smyth, G. K. (2010)" in html           # Monte Carlo p-values
    assert "Westfall, P. H. and Young, S. S. (1993)" in html       # max-T
    assert "no column &#x27;recipy&#x27;" in html
    saved = (folder / "saved.html").read_text()     # `save report` inside the file
    assert saved.count('class="permq-result"') == 6


def test_save_report_needs_an_html_name(tmp_path):
    out = permq.run('compare [1, 2, 3] vs [4, 5, 6]\nsave report "r.txt"\nsave report "r.html"',
                    base_dir=tmp_path)
    assert isinstance(out[1], permq.Failure) and "does not end in .html" in out[1].message
    assert out[2].text.startswith("wrote the report") and (tmp_path / "r.html").exists()


def test_exit_codes(tmp_path, capsys):
    good, bad = tmp_path / "good.pq", tmp_path / "bad.pq"
    good.write_text("compare [1, 2, 3] vs [4, 5, 6]\n")
    bad.write_text("compare [1, 2, 3] vs [4, 5, 6]\ncompare x by y\n")
    assert main(["run", str(good)]) == 0
    assert main(["run", str(bad)]) == 1
    assert main(["run", str(tmp_path / "none.pq")]) == 2
    with pytest.raises(SystemExit) as usage:
        main(["run", str(good), "--format", "pdf"])
    assert usage.value.code == 2
    assert main(["run", str(good), "--report", str(tmp_path / "no" / "such" / "r.html")]) == 1
    assert "cannot write the report" in capsys.readouterr().err


def test_copy_prints_the_last_sentence_and_fills_the_clipboard():
    printed = []
    shell = Shell(Session(base_dir=DEMO), write=printed.append)
    shell.clipboard = InMemoryClipboard()
    shell.handle("copy")
    assert "nothing to copy yet" in "".join(printed)
    shell.handle("compare [1.5, 2.5, 3.5] vs [4.5, 5.5, 6.5, 7.5]")
    printed.clear()
    shell.handle("copy")
    sentence = shell.session.last_result().sentence()
    assert printed[0].startswith(sentence + "\n(copied to the shell's clipboard")
    assert "\x1b[" not in printed[0]
    assert shell.clipboard.get_data().text == sentence
    shell.handle("set format sentences")
    printed.clear()
    shell.handle("count 7 of 20")
    assert printed[0].startswith("proportion of successes - 0.5 0.350")


# ---------------------------------------------------------------- in a real browser

CHROMIUM_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
                  "--no-first-run", "--disable-background-networking",
                  "--disable-component-update", "--disable-sync"]


def chromium():
    path = shutil.which("chromium") or shutil.which("chromium-browser")
    if path is None:
        import os

        if os.environ.get("CI"):
            pytest.fail("chromium is not installed; .ci/run installs Debian's chromium package")
        pytest.skip("chromium is not installed here (apt-get install chromium); CI installs it")
    return path


def test_the_report_renders_in_headless_chromium(report, tmp_path):
    browser = chromium()
    _, page, _ = report
    shot = tmp_path / "page.png"
    base = [browser, *CHROMIUM_FLAGS, "--window-size=1200,3000"]
    done = subprocess.run(base + [f"--user-data-dir={tmp_path / 'profile-a'}",
                                  f"--screenshot={shot}", page.as_uri()],
                          capture_output=True, timeout=120)
    assert shot.exists() and shot.stat().st_size > 20_000, done.stderr[-2000:]
    assert shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    dom = subprocess.run(base + [f"--user-data-dir={tmp_path / 'profile-b'}", "--dump-dom",
                                 page.as_uri()], capture_output=True, text=True, timeout=120).stdout
    assert dom.count("<svg") >= 4 and dom.count("<table") >= 7
    assert "Results in brief" in dom and "SHA-256" in dom


def test_the_report_has_no_console_errors_in_chromium(report, tmp_path):
    websocket = pytest.importorskip("websocket")
    from cdp import page_report

    browser = chromium()
    _, page, _ = report
    found = page_report(browser, CHROMIUM_FLAGS, page.as_uri(), tmp_path / "profile-c",
                        websocket, checks={
                            "pictures": "document.querySelectorAll('svg.permq-null').length",
                            "laws": "document.querySelectorAll('svg.permq-laws').length",
                            "tables": "document.querySelectorAll('table').length",
                            "bars": "document.querySelectorAll('svg.permq-null rect').length",
                            "width": "Math.round(document.querySelector('svg.permq-null')"
                                     ".getBoundingClientRect().width)",
                            "title": "document.title"})
    assert found["errors"] == []
    values = found["values"]
    assert values["pictures"] == 3 and values["laws"] == 1
    assert values["tables"] >= 7 and values["bars"] > 20 and values["width"] == 560
    assert values["title"] == "permq report"
