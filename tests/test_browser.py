"""The fit report and the lot report in a real browser (headless Chromium).

Each page is loaded at 800 px width: no console errors, every image decodes, the page is not
blank, and it reads without horizontal scrolling. Skipped only when no Chromium binary is
installed (``.ci/run`` installs Debian's ``chromium``). The checks are project choices, no
source.
"""

from __future__ import annotations

import json
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest

import freezeout
from freezeout.api import write_fit_report

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = ROOT / "sample_data"
WIDTH = 800  # [px] the viewport width the reports must read at
MARGIN = 4  # [px] rounding slack on scrollWidth (project choice, no source)

# Injected as the first element of <head>, so it sees every later load error. It records
# resource and script errors (capture phase: image errors do not bubble), console.error calls,
# and after the load event the decoded size of every image and the page's scroll width, and
# writes them as JSON into a <pre> that --dump-dom prints.
PROBE = """<script>
window.__fzErrors = [];
window.addEventListener('error', function (e) {
  var t = e.target, what = (t && t.tagName) ? ('resource ' + t.tagName + ' ' +
    String(t.src || t.href || '').slice(0, 80)) : String(e.message);
  window.__fzErrors.push('error: ' + what);
}, true);
(function () {
  var original = console.error;
  console.error = function () {
    window.__fzErrors.push('console.error: ' + Array.prototype.join.call(arguments, ' '));
    return original.apply(console, arguments);
  };
})();
window.addEventListener('load', function () {
  var de = document.documentElement;
  var images = Array.prototype.map.call(document.images, function (im) {
    var r = im.getBoundingClientRect();
    return {complete: im.complete, naturalWidth: im.naturalWidth,
            naturalHeight: im.naturalHeight, shownWidth: r.width, right: r.right};
  });
  var out = {errors: window.__fzErrors, images: images, scrollWidth: de.scrollWidth,
             clientWidth: de.clientWidth, textLength: document.body.innerText.length};
  var pre = document.createElement('pre');
  pre.id = 'freezeout-probe';
  pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
});
</script>"""


def _chromium() -> str:
    for name in ("chromium", "chromium-browser"):
        found = shutil.which(name)
        if found:
            return found
    pytest.skip("no chromium binary on PATH (.ci/run installs Debian's chromium package)")


def _run_chromium(binary: str, profile: Path, *args: str) -> subprocess.CompletedProcess:
    cmd = [binary, "--headless=new", "--disable-gpu", "--no-sandbox", "--hide-scrollbars",
           "--no-first-run", "--disable-extensions", f"--user-data-dir={profile}",
           "--enable-logging=stderr", "--v=0", *args]
    return subprocess.run(cmd, capture_output=True, text=True, timeout=60, check=False)


@pytest.fixture(scope="module")
def pages(tmp_path_factory) -> dict[str, Path]:
    """report.html of the bundled Si run and lot_report.html of the 2026-11 sample lot."""
    tmp = tmp_path_factory.mktemp("browser")
    result = freezeout.fit_file(SAMPLES / "harrowgate_si_n_run.csv")
    fit_paths = write_fit_report(result, tmp / "fit")
    outcome = freezeout.qualify_lot(SAMPLES / "lot_kestrel_2026-11" / "lot.toml", workers=1,
                                    db=f"sqlite:///{tmp / 'history.sqlite'}", out=tmp / "lot")
    return {"report.html": fit_paths["report.html"],
            "lot_report.html": outcome.written["lot_report.html"]}


@pytest.fixture(scope="module")
def chromium() -> str:
    """The Chromium binary; skips (before any report is made) when there is none."""
    return _chromium()


@pytest.fixture(scope="module")
def browser_runs(chromium, pages, tmp_path_factory) -> dict[str, dict]:
    """Per page: the probe's JSON, Chromium's console lines and the screenshot's path."""
    binary = chromium
    tmp = tmp_path_factory.mktemp("chromium")
    runs = {}
    for name, page in pages.items():
        probed = tmp / f"probe_{name}"
        html = page.read_text(encoding="utf-8")
        assert "<head>" in html
        probed.write_text(html.replace("<head>", "<head>" + PROBE, 1), encoding="utf-8")
        dom = _run_chromium(binary, tmp / "profile", f"--window-size={WIDTH},1000",
                            "--virtual-time-budget=5000", "--dump-dom", probed.as_uri())
        found = re.search(r'<pre id="freezeout-probe">(.*?)</pre>', dom.stdout, re.S)
        assert found, f"{name}: no probe output from chromium (rc {dom.returncode}): " \
                      f"{dom.stderr[-2000:]}"
        text = found.group(1).replace("&quot;", '"').replace("&lt;", "<") \
            .replace("&gt;", ">").replace("&amp;", "&")
        shot = tmp / f"{Path(name).stem}.png"
        snap = _run_chromium(binary, tmp / "profile", f"--window-size={WIDTH},2400",
                             f"--screenshot={shot}", page.as_uri())
        assert shot.is_file(), f"{name}: no screenshot (rc {snap.returncode}): " \
                               f"{snap.stderr[-2000:]}"
        console = [line for line in dom.stderr.splitlines() if ":CONSOLE" in line]
        runs[name] = {"probe": json.loads(text), "console": console, "screenshot": shot}
    return runs


PAGES = ("report.html", "lot_report.html")


@pytest.mark.parametrize("name", PAGES)
def test_no_console_errors(browser_runs, name):
    run = browser_runs[name]
    assert run["probe"]["errors"] == []
    # the reports carry no scripts, so the page itself has nothing to log
    assert run["console"] == []


@pytest.mark.parametrize("name", PAGES)
def test_every_image_decodes(browser_runs, name):
    images = browser_runs[name]["probe"]["images"]
    assert images, f"{name} shows no figure"
    for i, im in enumerate(images):
        assert im["complete"] and im["naturalWidth"] > 0 and im["naturalHeight"] > 0, (i, im)


@pytest.mark.parametrize("name", PAGES)
def test_reads_at_800_px_without_horizontal_scroll(browser_runs, name):
    probe = browser_runs[name]["probe"]
    assert probe["scrollWidth"] <= WIDTH + MARGIN, probe["scrollWidth"]
    for i, im in enumerate(probe["images"]):
        assert im["right"] <= probe["clientWidth"] + MARGIN, (i, im)


@pytest.mark.parametrize("name", PAGES)
def test_page_is_not_blank(browser_runs, name):
    import matplotlib.image as mpimg

    run = browser_runs[name]
    assert run["probe"]["textLength"] > 500
    pixels = mpimg.imread(run["screenshot"])
    assert pixels.shape[1] == WIDTH
    rgb = pixels[..., :3].reshape(-1, 3)
    background = rgb[0]
    differs = np.any(np.abs(rgb - background) > 0.05, axis=1)
    # text, tables and figures cover well over 1 % of the first 2400 px of either report
    assert differs.mean() > 0.01, differs.mean()


def test_fit_report_carries_the_caution_line(pages):
    # project choice, no source: the report says its numbers are a fit to be checked and
    # points to the hazards of the measurements behind them
    html = pages["report.html"].read_text(encoding="utf-8")
    caution = re.search(r"<p class=caution>(.*?)</p>", html, re.S)
    assert caution, "no caution line in report.html"
    text = " ".join(caution.group(1).split())
    assert "model fit" in text and "checked" in text
    for hazard in ("cryogens", "magnets", "heated stages", "mains-powered"):
        assert hazard in text
