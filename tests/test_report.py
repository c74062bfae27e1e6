"""report.html: valid, self-contained HTML whose table and pictures render in a browser."""

from __future__ import annotations

import html.parser
import re
import shutil
import subprocess

import pytest


CASE = """
title = "Made-up copper test box"
[geometry]
builder = "box"
width = "22.86 mm"
height = "10.16 mm"
length = "30 mm"
[mesh]
size = "3 mm"
[walls.x_min]
kind = "metal"
metal = "copper"
[solve]
modes = 3
"""


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    # femcav solve writes the pictures and the report itself (no --no-report)
    from conftest import solved_folder
    return solved_folder(tmp_path_factory.mktemp("report"), CASE) / "report.html"


class _Structure(html.parser.HTMLParser):
    """Open and closed elements, checked to nest properly (void elements aside)."""

    VOID = frozenset({"meta", "img", "br", "hr", "link", "input"})

    def __init__(self):
        super().__init__()
        self.stack, self.images, self.rows, self.errors = [], [], 0, []

    def handle_starttag(self, tag, attrs):
        if tag == "img":
            self.images.append(dict(attrs))
        if tag == "tr":
            self.rows += 1
        if tag not in self.VOID:
            self.stack.append(tag)

    def handle_endtag(self, tag):
        if not self.stack or self.stack.pop() != tag:
            self.errors.append(tag)


def test_report_is_well_formed_and_self_contained(report):
    text = report.read_text(encoding="utf-8")
    assert text.startswith("<!DOCTYPE html>")
    parser = _Structure()
    parser.feed(text)
    assert not parser.errors and not parser.stack
    # the spectrum, and for each of 3 modes its fields and its loss on the metal wall
    assert len(parser.images) == 7
    assert all(i["src"].startswith("data:image/png;base64,") for i in parser.images)
    assert "http://" not in text and "https://" not in text   # nothing to fetch
    assert "engineering estimates" in text
    assert "wall x_min" in text and "copper" in text and "box: width = 22.86 mm" in text
    assert parser.rows >= 3 + 1


def test_report_renders_in_headless_chromium(report, tmp_path):
    browser = shutil.which("chromium") or shutil.which("chromium-browser")
    if browser is None:
        pytest.skip("no chromium on this machine (Debian package 'chromium'; .ci/run installs "
                    "it where it can)")
    probe = tmp_path / "probe.html"
    script = ("<script>window.addEventListener('load', () => { const im = [...document.images];"
              " const ok = im.filter(i => i.complete && i.naturalWidth > 0).length;"
              " const rows = document.querySelectorAll('table tr').length;"
              " document.body.insertAdjacentHTML('beforeend', '<div id=\"probe\">images ' + ok"
              " + '/' + im.length + ' rows ' + rows + '</div>'); });</script>")
    probe.write_text(report.read_text(encoding="utf-8").replace("</body>", script + "</body>"),
                     encoding="utf-8")
    out = subprocess.run([browser, "--headless", "--no-sandbox", "--disable-gpu",
                          "--disable-dev-shm-usage", "--virtual-time-budget=10000",
                          "--dump-dom", probe.as_uri()],
                         capture_output=True, text=True, timeout=120, check=False)
    if out.returncode != 0 and "<html" not in out.stdout:
        pytest.skip(f"chromium did not start here: {out.stderr.strip()[-300:]}")
    found = re.search(r'id="probe">images (\d+)/(\d+) rows (\d+)<', out.stdout)
    assert found, out.stderr[-2000:]
    ok, total, rows = map(int, found.groups())
    assert total == 7 and ok == total          # no broken image
    assert rows >= 4
