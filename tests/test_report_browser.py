"""Real-browser check of the demo report: headless Chromium opens it from a file:// URL,
no script error or console error is recorded, and every figure container holds rendered
SVG.

The report's own script records ``window.onerror``, unhandled rejections and
``console.error`` calls into ``<pre id="gm-console-errors" data-count=...>`` and sets
``data-gm-rendered`` on ``<body>`` once every plot has been drawn; the test reads both
from the DOM that Chromium dumps after a virtual-time budget.

Skipped (with the reason) when Chromium is missing and CI is not set; when ``CI=true``
a missing Chromium is a failure, since ``.ci/run`` installs it.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from html.parser import HTMLParser
from pathlib import Path

import pytest

from gapmatch.cli import main

pytestmark = pytest.mark.browser

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "configs" / "demo.toml"
EVIL = "<script>alert(1)</script>"


def _chromium() -> str | None:
    for name in ("/usr/bin/chromium", "chromium", "chromium-browser"):
        path = (
            shutil.which(name)
            if not name.startswith("/")
            else (name if os.access(name, os.X_OK) else None)
        )
        if path:
            return path
    return None


@pytest.fixture(scope="module")
def chromium():
    path = _chromium()
    if path is None:
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail(
                "CI=true but headless Chromium is not installed (.ci/run installs "
                "the Debian package 'chromium')"
            )
        pytest.skip("headless Chromium not installed (apt-get install chromium); CI is not set")
    return path


def _dump_dom(chromium: str, page: Path, profile: Path, width: int = 1280) -> str:
    cmd = [
        chromium,
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        f"--user-data-dir={profile}",
        "--virtual-time-budget=10000",
        f"--window-size={width},2000",
        "--hide-scrollbars",
        "--dump-dom",
        page.resolve().as_uri(),
    ]
    res = subprocess.run(cmd, capture_output=True, text=True, timeout=180, check=False)
    assert res.returncode == 0, res.stderr[-2000:]
    return res.stdout


class _Figures(HTMLParser):
    """Collects, for every ``div.gm-figure``, whether an ``<svg>`` lies inside it, plus
    the error recorder's state."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack: list[str | None] = []  # figure id owning each open element
        self.figures: dict[str, int] = {}
        self.drawn: dict[str, int] = {}  # path/text elements inside each figure's SVG
        self.errors_count: str | None = None
        self.in_errors = False
        self.errors_text = ""
        self.rendered: str | None = None
        self.script_texts: list[str] = []
        self.in_script = False

    _VOID = {
        "area",
        "base",
        "br",
        "col",
        "embed",
        "hr",
        "img",
        "input",
        "link",
        "meta",
        "source",
        "track",
        "wbr",
    }

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        owner = self.stack[-1] if self.stack else None
        if tag == "div" and "gm-figure" in (a.get("class") or "").split():
            owner = a.get("id")
            self.figures.setdefault(owner, 0)
        if tag == "svg" and owner is not None:
            self.figures[owner] += 1
        if tag in ("path", "text", "rect") and owner is not None:
            self.drawn[owner] = self.drawn.get(owner, 0) + 1
        if tag == "pre" and a.get("id") == "gm-console-errors":
            self.errors_count = a.get("data-count")
            self.in_errors = True
        if tag == "body":
            self.rendered = a.get("data-gm-rendered")
        if tag == "script":
            self.in_script = True
        if tag not in self._VOID:
            self.stack.append(owner)

    def handle_startendtag(self, tag, attrs):
        owner = self.stack[-1] if self.stack else None
        if tag == "svg" and owner is not None:
            self.figures[owner] += 1
        if tag in ("path", "text", "rect") and owner is not None:
            self.drawn[owner] = self.drawn.get(owner, 0) + 1

    def handle_endtag(self, tag):
        if tag == "pre":
            self.in_errors = False
        if tag == "script":
            self.in_script = False
        if tag not in self._VOID and self.stack:
            self.stack.pop()

    def handle_data(self, data):
        if self.in_errors:
            self.errors_text += data
        if self.in_script:
            self.script_texts.append(data)


@pytest.fixture(scope="module")
def rendered(chromium, tmp_path_factory):
    out = tmp_path_factory.mktemp("browser")
    # the demo study plus one material whose name is markup, to see it rendered as text
    study = out / "demo-escape.toml"
    study.write_text(
        DEMO.read_text(encoding="utf-8")
        + f"""
[[materials]]
name = "{EVIL}"
gap_eV = 1.95
role = "top"
""",
        encoding="utf-8",
    )
    assert main(["report", str(study), "--out-dir", str(out), "--quiet"]) == 0
    page = out / "veltmora-top-cell.html"
    dom = _dump_dom(chromium, page, out / "profile")
    p = _Figures()
    p.feed(dom)
    return p, dom, page


def test_no_console_errors(rendered):
    p, _, _ = rendered
    assert p.errors_count == "0", p.errors_text


def test_every_figure_rendered_as_svg(rendered):
    p, _, page = rendered
    expected = len(re.findall(r'class="gm-figure-data"', page.read_text(encoding="utf-8")))
    assert expected >= 10
    assert len(p.figures) == expected
    assert p.rendered == str(expected)
    empty = [k for k, n in p.figures.items() if n == 0]
    assert not empty, f"figures without SVG: {empty}"
    # and every SVG draws something (paths, texts), not an empty frame
    blank = [k for k in p.figures if p.drawn.get(k, 0) < 10]
    assert not blank, f"figures whose SVG draws almost nothing: {blank}"


def test_markup_in_names_shows_as_text(rendered):
    p, dom, _ = rendered
    # the name appears escaped in the DOM (text), never as an element
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in dom
    # no script element was created from the name (figure JSON carries it only escaped)
    assert not any(t.strip() == "alert(1)" for t in p.script_texts)
    assert "<script>alert(1)" not in dom


def test_error_recorder_catches_errors(chromium, tmp_path):
    # negative control: the same recorder the report uses does see a console.error call
    # and an uncaught exception, so a clean count above means something
    from gapmatch.report.builder import _ERROR_HOOK

    page = tmp_path / "bad.html"
    page.write_text(
        f"<!DOCTYPE html><html><head><script>{_ERROR_HOOK}</script></head><body>"
        '<pre id="gm-console-errors" data-count="0"></pre>'
        "<script>console.error('boom');</script>"
        "<script>undefinedFunction();</script></body></html>",
        encoding="utf-8",
    )
    p = _Figures()
    p.feed(_dump_dom(chromium, page, tmp_path / "profile"))
    assert p.errors_count == "2"
    assert "boom" in p.errors_text and "undefinedFunction" in p.errors_text


# ---- layout at 1024 px: no sideways scrolling, and a screenshot for a human look --------
# Appended to a copy of the page: once every plot is drawn, record the page's scroll
# width, the viewport width and the widest element that sticks out, on <body>.
_MEASURE = """<script>
(function(){
  function measure(){
    var de=document.documentElement, vw=window.innerWidth, worst='', w=0;
    document.querySelectorAll('body *').forEach(function(el){
      var r=el.getBoundingClientRect();
      if(r.right>vw+1&&r.right>w){w=r.right;worst=el.tagName+'.'+el.className+'#'+el.id;}});
    document.body.setAttribute('data-gm-scroll-width',String(de.scrollWidth));
    document.body.setAttribute('data-gm-viewport',String(vw));
    document.body.setAttribute('data-gm-height',String(de.scrollHeight));
    document.body.setAttribute('data-gm-widest',worst);
  }
  function wait(){ if(document.body.hasAttribute('data-gm-rendered')||
    !document.querySelector('.gm-figure')){measure();} else {setTimeout(wait,100);} }
  window.addEventListener('load',wait);
})();
</script>"""


def _measure(chromium: str, page: Path, tmp: Path, width: int) -> dict[str, str]:
    probe = tmp / f"measure-{page.name}"
    probe.write_text(
        page.read_text(encoding="utf-8").replace("</body>", _MEASURE + "</body>"),
        encoding="utf-8",
    )
    dom = _dump_dom(chromium, probe, tmp / "profile-measure", width=width)
    body = re.search(r"<body([^>]*)>", dom).group(1)
    return dict(re.findall(r'(data-gm-[a-z-]+)="([^"]*)"', body))


@pytest.mark.parametrize("width", [1024, 1400])
def test_no_sideways_scrolling(chromium, rendered, tmp_path, width):
    _, _, page = rendered
    m = _measure(chromium, page, tmp_path, width)
    assert int(m["data-gm-viewport"]) >= width - 24
    assert int(m["data-gm-scroll-width"]) <= int(m["data-gm-viewport"]), m


def test_overflow_check_can_fail(chromium, tmp_path):
    # negative control: a page wider than the window is seen as overflowing
    page = tmp_path / "wide.html"
    page.write_text(
        '<!DOCTYPE html><html><body><nav style="white-space:nowrap">'
        + "".join(f'<a href="#x">{k}. a long section title</a>' for k in range(30))
        + "</nav></body></html>",
        encoding="utf-8",
    )
    m = _measure(chromium, page, tmp_path, 1024)
    assert int(m["data-gm-scroll-width"]) > int(m["data-gm-viewport"])
    assert m["data-gm-widest"].startswith(("NAV", "A"))


def test_screenshot_at_1024_px(chromium, rendered, tmp_path):
    """Whole-page screenshot at 1024 px, kept as a test artefact (not committed) under
    reports/screenshots/ for a human look."""
    _, _, page = rendered
    height = int(_measure(chromium, page, tmp_path, 1024)["data-gm-height"])
    shots = ROOT / "reports" / "screenshots"
    shots.mkdir(parents=True, exist_ok=True)
    png = shots / "demo-1024.png"
    png.unlink(missing_ok=True)
    cmd = [
        chromium,
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--no-first-run",
        "--hide-scrollbars",
        f"--user-data-dir={tmp_path / 'profile-shot'}",
        "--virtual-time-budget=15000",
        f"--window-size=1024,{min(height + 40, 30000)}",
        f"--screenshot={png}",
        page.resolve().as_uri(),
    ]
    res = subprocess.run(cmd, capture_output=True, text=True, timeout=240, check=False)
    assert res.returncode == 0, res.stderr[-2000:]
    data = png.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    w, h = int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")
    assert w == 1024 and h > 5000
