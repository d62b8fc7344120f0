"""Browser test: a recorded demo page draws its bqplot figures with no kernel and no network.

``dashboards/demo.ipynb`` (a temporary copy) is recorded with ``python -m dampline record
--html``; the page is opened from ``file://`` in Debian's headless Chromium with every
request that is not ``file://`` or ``127.0.0.1`` aborted (and listed: the list must stay
empty). The FRF line must be drawn (``.bqplot svg path.line`` with a non-empty ``d``),
the record header must show the model hash, and a screenshot (``<tmp>/record.png``, also
``/tmp/dampline-record-screenshot.png``) must not be blank.

Run:  CI=true python -m pytest tests/browser/test_record_browser.py -s
"""
from __future__ import annotations

import base64
import os
import shutil
import subprocess
import sys
import time
from pathlib import Path

import pytest

from dampline.assets import AssetError, fetch_assets

REPO = Path(__file__).resolve().parents[2]
IN_CI = os.environ.get("CI", "").strip().lower() == "true"
DRAW_TIMEOUT_MS = 60_000


@pytest.fixture
def npm_assets(browser_requirements):
    try:
        return fetch_assets()
    except AssetError as exc:
        if IN_CI:
            pytest.fail(f"CI=true but the npm scripts could not be fetched: {exc}", pytrace=False)
        pytest.skip(f"npm registry not reachable: {exc}")


def _distinct_colours(page, png: bytes) -> dict:
    """Count the distinct colours of a PNG by decoding it in the page's own canvas."""
    return page.evaluate(
        """async (b64) => {
            const img = new Image();
            img.src = 'data:image/png;base64,' + b64;
            await img.decode();
            const c = document.createElement('canvas');
            c.width = img.width; c.height = img.height;
            const ctx = c.getContext('2d');
            ctx.drawImage(img, 0, 0);
            const d = ctx.getImageData(0, 0, c.width, c.height).data;
            const seen = new Set();
            let dark = 0;
            for (let i = 0; i < d.length; i += 4 * 7) {
                seen.add((d[i] << 16) | (d[i + 1] << 8) | d[i + 2]);
                if (d[i] + d[i + 1] + d[i + 2] < 300) dark++;
            }
            return {colours: seen.size, dark: dark, width: img.width, height: img.height};
        }""",
        base64.b64encode(png).decode(),
    )


def test_recorded_page_draws_offline(npm_assets, page, tmp_path, record_property):
    root = tmp_path / "dashboards"
    shutil.copytree(REPO / "dashboards", root,
                    ignore=shutil.ignore_patterns(".ipynb_checkpoints", "__pycache__", "*.html"))
    html = tmp_path / "record" / "demo.html"
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join(filter(None, [str(REPO), env.get("PYTHONPATH")]))
    t0 = time.perf_counter()
    proc = subprocess.run(
        [sys.executable, "-m", "dampline", "record", str(root / "demo.ipynb"), "--html", str(html),
         "--output", str(tmp_path / "record" / "demo.executed.ipynb")],
        capture_output=True, text=True, env=env, timeout=900)
    record_s = time.perf_counter() - t0
    assert proc.returncode == 0, proc.stderr
    size_mb = html.stat().st_size / 1e6
    record_property("record_s", round(record_s, 1))
    record_property("html_mb", round(size_mb, 2))
    print(f"\nrecord of demo.ipynb: {record_s:.1f} s, page {size_mb:.1f} MB")

    blocked, served = [], []

    def only_local(route):
        url = route.request.url
        if url.startswith("file://") or url.startswith(("http://127.0.0.1", "https://127.0.0.1")):
            served.append(url)
            route.continue_()
        else:
            blocked.append(url)
            route.abort()

    page.route("**/*", only_local)
    shot = tmp_path / "record.png"
    try:
        t0 = time.perf_counter()
        page.goto(html.as_uri())
        page.wait_for_function(
            """() => [...document.querySelectorAll('.bqplot svg path.line')]
                        .some(p => (p.getAttribute('d') || '').length > 20)""",
            timeout=DRAW_TIMEOUT_MS)
        draw_s = time.perf_counter() - t0
        record_property("draw_s", round(draw_s, 2))
        print(f"page drawn offline in {draw_s:.2f} s")

        # the FRF line: many points, finite coordinates
        d = page.evaluate("""() => [...document.querySelectorAll('.bqplot svg path.line')]
                               .map(p => p.getAttribute('d') || '')
                               .sort((a, b) => b.length - a.length)[0]""")
        nums = [float(v) for v in d.replace("M", " ").replace("L", " ").replace(",", " ").split()]
        assert len(nums) > 200 and all(abs(v) < 1e7 for v in nums)

        header = page.inner_text("#dampline-record-header")
        info = page.evaluate("JSON.parse(document.getElementById('dampline-record-info').textContent)")
        assert info["models"] and info["models"][0]["sha256"] in header
        assert info["versions"]["bqplot"] in header

        page.wait_for_timeout(300)   # let the last transitions settle
        png = page.screenshot(path=str(shot), full_page=True)
        shutil.copy(shot, "/tmp/dampline-record-screenshot.png")
        stats = _distinct_colours(page, png)
        record_property("screenshot", str(shot))
        assert stats["colours"] > 20 and stats["dark"] > 1000, f"screenshot looks blank: {stats}"
        assert blocked == [], f"the page asked the network for: {blocked}"
        # one file, nothing beside it: the page asked for itself only
        assert served == [html.as_uri()], served
        assert not page.console_errors, page.console_errors
    except Exception:
        page.screenshot(path=str(tmp_path / "failure.png"), full_page=True)
        raise
