"""The HTML review record rendered in a real headless Chromium (Debian's chromium package, which .ci/run
installs): the DOM holds the verdict and every failing finding, a screenshot is not blank, and markup in the
design's text is shown as text, never run. Skipped, with the reason, only where no browser is installed."""

import io
import os
import re
import shutil
import subprocess

import pytest

from margincheck.checking import check_file
from margincheck.findings import Status
from margincheck.report.html_report import render
from tests.conftest import EXAMPLES

BROWSER = next((shutil.which(name) for name in ("chromium", "chromium-browser") if shutil.which(name)), None)
pytestmark = pytest.mark.skipif(BROWSER is None, reason="no Chromium installed (apt-get install chromium)")

# Flags for a headless run on a closed network (no background connections, no first-run work, no GPU).
_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
          "--disable-background-networking", "--disable-component-update", "--disable-sync",
          "--hide-scrollbars", "--allow-file-access-from-files"]
HOSTILE = ('<script>document.body.setAttribute("data-pwned", "1")</script>'
           '<img src=x onerror="document.body.setAttribute(\'data-pwned\', \'1\')"><b>bold</b>')


def _browser(tmp_path, *arguments: str) -> subprocess.CompletedProcess:
    profile = tmp_path / f"profile-{len(list(tmp_path.iterdir()))}"
    return subprocess.run([BROWSER, *_FLAGS, f"--user-data-dir={profile}", *arguments], capture_output=True,
                          text=True, timeout=120, env={**os.environ, "HOME": str(tmp_path)}, check=False)


@pytest.fixture
def record(tmp_path, write_design, contract_data, run_cli):
    contract_data["design"]["title"] = HOSTILE
    contract_data["switches"][0]["soa_points"] = [{"name": HOSTILE, "v_ds": "300 V", "i_d": "1 A",
                                                   "pulse": "10 us"}]
    design = write_design(contract_data)
    page = tmp_path / "review.html"
    code, _, _ = run_cli("check", design, "--report", f"html:{page}")
    assert code == 1
    return design, page


def test_the_dom_holds_the_verdict_and_every_failing_finding(tmp_path, record):
    design, page = record
    result = _browser(tmp_path, "--dump-dom", page.as_uri())
    dom = result.stdout
    assert 'id="verdict"' in dom and "FAIL" in dom, result.stderr[-2000:]
    failing = [f for f in check_file(design).findings if f.status in (Status.FAIL, Status.NOT_EVALUATED)]
    assert failing
    for finding in failing:
        assert f'id="{finding.subject}--{finding.rule}"' in dom, finding.rule


def test_markup_in_the_design_is_text_not_code(tmp_path, record):
    _, page = record
    dom = _browser(tmp_path, "--dump-dom", page.as_uri()).stdout
    assert "data-pwned" not in dom.split("<body", 1)[1].split(">", 1)[0]  # no script ran, no handler fired
    assert "&lt;script&gt;document.body.setAttribute" in dom  # shown literally
    assert "<b>bold</b>" not in dom


def test_a_screenshot_is_not_blank(tmp_path, record):
    image_library = pytest.importorskip("matplotlib.image", reason="the plot extra reads the PNG")
    _, page = record
    shot = tmp_path / "shot.png"
    result = _browser(tmp_path, f"--screenshot={shot}", "--window-size=1200,1600", page.as_uri())
    assert shot.exists(), result.stderr[-2000:]
    pixels = image_library.imread(str(shot))
    assert pixels.shape[0] >= 1000 and pixels.shape[1] >= 1000
    assert pixels[..., :3].std() > 0.05  # text and tables on a white page, not one flat colour


def test_the_record_is_self_contained():
    page = _render(EXAMPLES / "solar-string-sic-leg.yaml")
    for fetch in ('src="http', "src='http", 'href="http', "href='http", "url(http", "@import", "<link", "<iframe"):
        assert fetch not in page, fetch  # nothing is loaded from anywhere (namespace URIs are names only)
    assert all(reference.startswith("url(#") for reference in re.findall(r"url\([^)]*\)", page))
    assert "<script" not in page and "Content-Security-Policy" in page
    assert "<svg" in page  # the SOA chart, inline (the plot extra is installed with the tests)


def _render(path) -> str:
    buffer = io.StringIO()
    render(check_file(path), buffer)
    return buffer.getvalue()
