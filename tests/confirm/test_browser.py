"""Open an HTML report in real headless Chromium: no console errors, verdict shown, screenshot saved.

Needs Debian's ``chromium`` package (``.ci/run`` installs it when missing); skipped
with a reason when ``/usr/bin/chromium`` is absent. Set ``CONFIRM_SCREENSHOT_DIR`` to
keep the screenshot.
"""

from __future__ import annotations

import html
import json
import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from confirm.qc import evaluate_qc, parse_spec
from confirm.report_html import write_html_report
from tests.confirm._synthetic_results import pentene_mixture

CHROMIUM = Path("/usr/bin/chromium")
VERDICT = "The major product is (E)-pent-2-ene, 80 % of the alkenes."

pytestmark = pytest.mark.skipif(not CHROMIUM.exists(),
                                reason="Debian chromium not installed (/usr/bin/chromium)")

# Recorded into the DOM: uncaught errors and failed resource loads (capture phase), then on load
# the number of drawn SVG elements and the verdict text as the browser laid it out.
_PROBE_HEAD = (
    "<script>window.__problems=[];window.addEventListener('error',function(e){"
    "var t=e.target;window.__problems.push(String(e.message||(t&&(t.src||t.href))||e.type));},true);"
    "</script>"
)
_PROBE_LOAD = (
    "<script>window.addEventListener('load',function(){var d=document.createElement('div');"
    "d.id='probe';var v=document.getElementById('verdict');"
    "d.setAttribute('data-problems',JSON.stringify(window.__problems));"
    "d.setAttribute('data-svgs',String(document.querySelectorAll('svg').length));"
    "d.setAttribute('data-verdict',v?v.innerText:'');"
    "d.setAttribute('data-verdict-height',v?String(v.getBoundingClientRect().height):'0');"
    "var q=document.getElementById('qc-status');d.setAttribute('data-qc',q?q.innerText:'');"
    "d.setAttribute('data-qc-top',q?String(q.getBoundingClientRect().top):'-1');"
    "d.setAttribute('data-verdict-top',v?String(v.getBoundingClientRect().top):'-1');"
    "var out=[];document.querySelectorAll('figure svg').forEach(function(s){var b=s.getBoundingClientRect();"
    "var boxes=[];s.querySelectorAll('text').forEach(function(t){var r=t.getBoundingClientRect();"
    "if(!t.textContent.trim())return;"
    "if(r.left<b.left-1||r.right>b.right+1||r.top<b.top-1||r.bottom>b.bottom+1)"
    "out.push('outside: '+t.textContent);"
    "boxes.push([r,t.textContent]);});"
    "for(var i=0;i<boxes.length;i++)for(var j=i+1;j<boxes.length;j++){var p=boxes[i][0],q=boxes[j][0];"
    "var w=Math.min(p.right,q.right)-Math.max(p.left,q.left),"
    "h=Math.min(p.bottom,q.bottom)-Math.max(p.top,q.top);"
    "if(w>2&&h>2)out.push('overlap: '+boxes[i][1]+' / '+boxes[j][1]);}});"
    "d.setAttribute('data-text-problems',JSON.stringify(out));"
    "document.body.appendChild(d);});</script>"
)


def _chromium(profile: Path, *args: str) -> subprocess.CompletedProcess:
    command = [str(CHROMIUM), "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
               "--no-first-run", "--disable-background-networking", "--disable-component-update",
               "--disable-sync",
               f"--user-data-dir={profile}", "--enable-logging=stderr", "--v=0", *args]
    return subprocess.run(command, capture_output=True, text=True, timeout=120, check=False)


def _console_errors(stderr: str) -> list[str]:
    lines = [line for line in stderr.splitlines() if ":CONSOLE" in line]
    return [line for line in lines if re.search(r"error|uncaught|failed", line, re.IGNORECASE)]


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    folder = tmp_path_factory.mktemp("browser")
    result = pentene_mixture(0.80, 0.15, 0.05, 0.0, summary=VERDICT)
    spec = parse_spec({"product": "C/C=C/CC", "candidates": ["C/C=C\\CC", "C=CCCC"],
                       "limits": {"max_other_isomer_percent": 2.0}})
    return write_html_report(result, folder / "report.html", qc=evaluate_qc(result, spec))


def _probe(report: Path, tmp_path: Path) -> tuple[dict, subprocess.CompletedProcess]:
    """Open ``report`` with the probes in headless Chromium: the probe's attributes and the run."""
    probed = tmp_path / "probed.html"
    text = report.read_text(encoding="utf-8")
    text = text.replace("<head>", "<head>" + _PROBE_HEAD, 1).replace("</body>", _PROBE_LOAD + "</body>")
    probed.write_text(text, encoding="utf-8")
    proc = _chromium(tmp_path / "profile", "--virtual-time-budget=5000", "--dump-dom", probed.as_uri())
    assert proc.returncode == 0, proc.stderr[-2000:]
    match = re.search(r'<div id="probe"([^>]*)>', proc.stdout)
    assert match, "the load probe did not run: " + proc.stdout[-500:]
    return dict(re.findall(r'([\w-]+)="([^"]*)"', match.group(1))), proc


@pytest.mark.slow
def test_report_renders_without_errors_and_shows_the_verdict(report, tmp_path):
    attrs, proc = _probe(report, tmp_path)
    assert json.loads(html.unescape(attrs["data-problems"])) == []
    assert _console_errors(proc.stderr) == []
    assert VERDICT in html.unescape(attrs["data-verdict"])
    # the QC decision is the headline, in words, above the reaction verdict
    assert "QC FAIL" in html.unescape(attrs["data-qc"])
    assert 0 <= float(attrs["data-qc-top"]) < float(attrs["data-verdict-top"])
    assert float(attrs["data-verdict-height"]) > 0
    assert int(attrs["data-svgs"]) >= 6  # two plots and four structures
    # no plot text runs out of its figure or over another text (legend names, labels, ticks)
    assert json.loads(html.unescape(attrs["data-text-problems"])) == []


@pytest.mark.slow
def test_screenshot_of_the_report(report, tmp_path):
    shot = tmp_path / "report.png"
    proc = _chromium(tmp_path / "profile", "--window-size=1100,1600", "--hide-scrollbars",
                     f"--screenshot={shot}", report.as_uri())
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert _console_errors(proc.stderr) == []
    data = shot.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    from matplotlib import image

    pixels = image.imread(shot)
    assert pixels.shape[0] == 1600 and pixels.shape[1] == 1100
    assert pixels[..., :3].std() > 0.05  # drawn content, not a blank page
    keep = os.environ.get("CONFIRM_SCREENSHOT_DIR")
    if keep:
        shutil.copy(shot, Path(keep) / "report.png")


@pytest.mark.slow
def test_a_five_candidate_report_prints_on_at_most_four_a4_pages(tmp_path):
    # the real demo analysis at 400 MHz (five candidates, every section filled), printed to PDF by
    # the browser with its own print layout (A4 portrait)
    from confirm.analysis import analyze_path
    from confirm.commands.demo import sample_files

    result = analyze_path(sample_files()[0], substrate="CC(Br)Cc1ccc(OC)cc1", reagent="KOH", solvent="DMSO",
                          temp_c=80.0)
    assert len(result.fit.components) == 5
    report = write_html_report(result, tmp_path / "demo.html")
    pdf = tmp_path / "demo.pdf"
    proc = _chromium(tmp_path / "profile", "--no-pdf-header-footer", f"--print-to-pdf={pdf}", report.as_uri())
    assert proc.returncode == 0, proc.stderr[-2000:]
    data = pdf.read_bytes()
    assert data[:5] == b"%PDF-"
    pages = len(re.findall(rb"/Type\s*/Page(?!s)", data))
    assert 1 <= pages <= 4, pages
    box = re.search(rb"/MediaBox\s*\[\s*0 0 ([\d.]+) ([\d.]+)\s*\]", data)
    assert box and abs(float(box.group(1)) - 595) < 2 and abs(float(box.group(2)) - 842) < 2  # A4 portrait
    # and on screen no plot text runs out of its figure or over another (five legend entries)
    attrs, _ = _probe(report, tmp_path)
    assert json.loads(html.unescape(attrs["data-text-problems"])) == []


@pytest.mark.slow
def test_long_compound_names_are_shown_whole_and_stay_inside_the_figure(tmp_path):
    from dataclasses import replace

    names = ["(E)-pent-2-ene from the second crystallisation, lot 17",
             "(Z)-pent-2-ene, the isomer we do not want here", "pent-1-ene",
             "2-bromopentane (starting material) as received"]
    result = pentene_mixture(0.80, 0.15, 0.05, 0.0)
    candidates = tuple(replace(c, label=n, name=n) for c, n in zip(result.candidates, names, strict=True))
    components = tuple(replace(c, candidate=k)
                       for c, k in zip(result.fit.components, candidates, strict=True))
    result = replace(result, candidates=candidates, fit=replace(result.fit, components=components))
    report = write_html_report(result, tmp_path / "names.html")
    attrs, _ = _probe(report, tmp_path)
    assert json.loads(html.unescape(attrs["data-text-problems"])) == []
    text = report.read_text(encoding="utf-8")
    assert all(name in text for name in names) and "..." not in text
