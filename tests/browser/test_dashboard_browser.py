"""Live-browser test: dashboards/demo.ipynb in a real JupyterLab driven by headless Chromium.

Runs all cells, waits for the bqplot FRF line, moves the damping (``eta``) slider with the
keyboard and checks that the FRF redraws, timing slider-to-redraw; moves the frequency
control when it is keyboard-operable; saves a screenshot and checks it is not blank.

Run:  CI=true python -m pytest tests/browser -s        (``-s`` shows the timings)
Timings also go to <tmp>/timings.json and /tmp/dampline-browser-timings.json; the
screenshot to <tmp>/dashboard.png and /tmp/dampline-browser-screenshot.png.
``DAMPLINE_BROWSER_NOTEBOOK=/path/x.ipynb`` runs another notebook (copied into the served
folder) instead of demo.ipynb, e.g. a stand-in while the dashboard is being written.
"""
from __future__ import annotations

import base64
import json
import os
import shutil
import statistics
import time
from pathlib import Path

import pytest

MOVES = int(os.environ.get("DAMPLINE_BROWSER_MOVES", "10"))
REDRAW_TIMEOUT_MS = 20_000

# Appended to the served copy of the notebook (the repository file is untouched): it tags
# the dashboard, its figures and its controls with CSS classes, so the test can find them
# without depending on widget labels or layout.
TAG_CELL = r'''
def _dl_find_dashboard():
    g = globals()
    cands = [g.get("d"), g.get("dash"), g.get("dashboard")]
    cands += list(g.values()) + list(g.get("Out", {}).values())
    for c in cands:
        if hasattr(c, "figures") and hasattr(c, "controls") and hasattr(c, "add_class"):
            return c
    raise RuntimeError("no dashboard object (with .figures and .controls) in the notebook")

_dl = _dl_find_dashboard()
_dl.add_class("dl-dashboard")
for _k, _w in _dl.figures.items():
    _w.add_class(f"dl-fig-{_k}")
for _k, _w in _dl.controls.items():
    if hasattr(_w, "add_class"):
        _w.add_class(f"dl-ctl-{_k}")
print("dl-tagged", sorted(_dl.figures), sorted(_dl.controls))
'''


def _prepare_notebook(root: Path) -> str:
    src = os.environ.get("DAMPLINE_BROWSER_NOTEBOOK")
    if src:
        name = Path(src).name
        shutil.copy(src, root / name)
    else:
        name = "demo.ipynb"
    nb_path = root / name
    assert nb_path.exists(), f"{nb_path} missing"
    nb = json.loads(nb_path.read_text())
    nb["cells"].append({"cell_type": "code", "execution_count": None, "metadata": {},
                        "outputs": [], "source": TAG_CELL.strip()})
    nb.setdefault("metadata", {})["kernelspec"] = {
        "name": "python3", "display_name": "Python 3 (ipykernel)", "language": "python"}
    nb_path.write_text(json.dumps(nb, indent=1))
    return name


def _wait_kernel_idle(page, timeout_ms=90_000):
    # The status bar names the kernel and says "Idle" once a kernel exists and is idle.
    page.wait_for_function(
        """() => {
            const sb = document.querySelector('#jp-main-statusbar');
            // e.g. "Python 3 (ipykernel) | Idle" (neighbouring items follow with no space)
            return sb && /\\|\\s*Idle/.test(sb.textContent) && !/No Kernel/.test(sb.textContent);
        }""",
        timeout=timeout_ms,
    )


def _run_all_cells(page):
    ok = page.evaluate(
        """async () => {
            const app = window.jupyterapp;
            if (!app || !app.commands.hasCommand('notebook:run-all-cells')) return false;
            await app.commands.execute('notebook:run-all-cells');
            return true;
        }"""
    )
    if not ok:  # the menu, as a person would
        page.locator(".lm-MenuBar-itemLabel", has_text="Run").first.click()
        page.locator(".lm-Menu-itemLabel", has_text="Run All Cells").first.click()


# Observe a figure's SVG; record performance.now() of the first change after arming, and
# of the last key press (keydown, capture phase) so the time is measured inside the page.
ARM_JS = """(sel) => {
    const root = document.querySelector(sel);
    if (!root) throw new Error('no element ' + sel);
    window.__dlChange = null;
    window.__dlKeyT = null;
    const snap = () => Array.from(root.querySelectorAll('svg path.line'))
        .map(p => p.getAttribute('d')).join('|');
    const before = snap();
    if (window.__dlObs) window.__dlObs.disconnect();
    const obs = new MutationObserver(() => {
        if (window.__dlChange === null && snap() !== before) window.__dlChange = performance.now();
    });
    obs.observe(root, {subtree: true, attributes: true, childList: true, characterData: true});
    window.__dlObs = obs;
    if (!window.__dlKeyHook) {
        document.addEventListener('keydown', () => { window.__dlKeyT = performance.now(); }, true);
        window.__dlKeyHook = true;
    }
    return before.length;
}"""


def _move_and_time(page, handle, key, fig_sel, timeout_ms=REDRAW_TIMEOUT_MS):
    """Press ``key`` on a focused slider handle; return ms to the figure's redraw, or None."""
    page.evaluate(ARM_JS, fig_sel)
    handle.focus()
    handle.press(key)
    try:
        page.wait_for_function("() => window.__dlChange !== null", timeout=timeout_ms,
                               polling="raf")
    except Exception:
        return None
    return page.evaluate("() => window.__dlChange - window.__dlKeyT")


def _settle(page):
    """Let queued updates finish so the next move is measured alone."""
    _wait_kernel_idle(page, timeout_ms=30_000)
    page.wait_for_timeout(250)


def _distinct_colours(page, png: bytes) -> dict:
    """Decode the PNG in the browser (no imaging library needed) and count its colours."""
    return page.evaluate(
        """async (b64) => {
            const img = new Image();
            img.src = 'data:image/png;base64,' + b64;
            await img.decode();
            const c = document.createElement('canvas');
            c.width = img.width; c.height = img.height;
            const ctx = c.getContext('2d');
            ctx.drawImage(img, 0, 0);
            const data = ctx.getImageData(0, 0, c.width, c.height).data;
            const counts = new Map();
            for (let i = 0; i < data.length; i += 4) {
                const k = (data[i] << 16) | (data[i + 1] << 8) | data[i + 2];
                counts.set(k, (counts.get(k) || 0) + 1);
            }
            const n = data.length / 4;
            return {width: c.width, height: c.height, distinct: counts.size,
                    dominant_fraction: Math.max(...counts.values()) / n};
        }""",
        base64.b64encode(png).decode(),
    )


def _control_handle(page, name):
    loc = page.locator(f".dl-ctl-{name} .noUi-handle")
    return loc.first if loc.count() else None


def test_dashboard_in_jupyterlab(lab_server, page, tmp_path, record_property):
    name = _prepare_notebook(lab_server.root)
    timings: dict = {}
    t_start = time.perf_counter()
    try:
        page.goto(f"{lab_server.base_url}/lab/tree/{name}", wait_until="domcontentloaded")
        page.wait_for_selector(".jp-Notebook .jp-Cell", timeout=90_000)
        _wait_kernel_idle(page)
        timings["lab_ready_s"] = round(time.perf_counter() - t_start, 2)

        t0 = time.perf_counter()
        _run_all_cells(page)
        page.wait_for_selector(".dl-fig-frf svg path.line", timeout=180_000)
        _wait_kernel_idle(page, timeout_ms=180_000)
        timings["run_all_to_plot_s"] = round(time.perf_counter() - t0, 2)

        # No cell may have raised.
        errors = page.locator(".jp-OutputArea-output[data-mime-type='application/vnd.jupyter.stderr']")
        tracebacks = [t for t in errors.all_inner_texts() if "Traceback" in t or "Error" in t]
        assert not tracebacks, "a notebook cell raised:\n" + "\n---\n".join(tracebacks)

        frf = page.locator(".dl-fig-frf svg path.line").first
        d0 = frf.get_attribute("d")
        assert d0 and len(d0) > 100, f"FRF line has no data: {d0!r}"

        page.locator(".dl-dashboard").first.scroll_into_view_if_needed()
        eta = _control_handle(page, "eta")
        assert eta is not None, "no slider handle for the 'eta' control"
        eta.scroll_into_view_if_needed()

        exact0 = frf.get_attribute("d")          # the first line of the FRF view is the exact curve
        # Find a direction the slider can move in, then alternate so it never hits an end.
        keys = ["ArrowRight", "ArrowLeft"]
        first = _move_and_time(page, eta, keys[0], ".dl-fig-frf")
        if first is None:
            keys.reverse()
            _settle(page)
            first = _move_and_time(page, eta, keys[0], ".dl-fig-frf")
        assert first is not None, "moving the eta slider did not redraw the FRF"
        samples = [first]
        for i in range(1, MOVES):
            _settle(page)
            ms = _move_and_time(page, eta, keys[i % 2], ".dl-fig-frf")
            assert ms is not None, f"eta move {i + 1} did not redraw the FRF within {REDRAW_TIMEOUT_MS} ms"
            samples.append(ms)
        _settle(page)
        timings["eta_redraw_ms"] = [round(s, 1) for s in samples]
        timings["eta_redraw_median_ms"] = round(statistics.median(samples), 1)
        # during the drag the modal curve follows; once it pauses the exact curve catches up
        # (one more step: the alternating moves above end where they began)
        assert _move_and_time(page, eta, keys[0], ".dl-fig-frf") is not None
        page.wait_for_function(
            "(d0) => document.querySelector('.dl-fig-frf svg path.line').getAttribute('d') !== d0",
            arg=exact0, timeout=REDRAW_TIMEOUT_MS)

        # log frequency axis: the FRF path is redrawn on the new scale, and back
        before = frf.get_attribute("d")
        ticks_js = "() => Array.from(document.querySelectorAll('.dl-fig-frf .tick text')).map(t => t.textContent).join('|')"
        ticks0 = page.evaluate(ticks_js)
        page.locator(".dl-ctl-frequency_axis button", has_text="log").first.click()
        page.wait_for_function(
            "(d0) => document.querySelector('.dl-fig-frf svg path.line').getAttribute('d') !== d0",
            arg=before, timeout=REDRAW_TIMEOUT_MS)
        _settle(page)
        assert page.evaluate(ticks_js) != ticks0, "the axis kept its linear ticks on the log scale"
        page.locator(".dl-ctl-frequency_axis button", has_text="linear").first.click()
        # the linear axis (ticks and all) comes back
        page.wait_for_function(f"() => ({ticks_js})() === {json.dumps(ticks0)}",
                               timeout=REDRAW_TIMEOUT_MS)
        _settle(page)
        # the coupling heat map labels every 5th of its 40 modes, not all of them
        labels = page.locator(".dl-fig-coupling .axis text, .dl-fig-coupling .tick text").all_inner_texts()
        timings["coupling_tick_labels"] = len(labels)
        assert len(labels) < 60, f"{len(labels)} labels crowd the 40-mode heat map"

        # figures as PNG: the browser downloads one image per figure
        with page.expect_download(timeout=REDRAW_TIMEOUT_MS) as dl_info:
            page.locator(".dl-ctl-export_png").first.click()
        download = dl_info.value
        png_path = tmp_path / download.suggested_filename
        download.save_as(str(png_path))
        head = png_path.read_bytes()[:8]
        assert head == b"\x89PNG\r\n\x1a\n", (download.suggested_filename, head)
        timings["png_download"] = download.suggested_filename
        _settle(page)

        # Frequency cursor: keyboard on its slider handle when it has one; the field view
        # (or failing that the FRF, where the cursor is drawn) must redraw.
        fh = _control_handle(page, "frequency")
        if fh is not None:
            fh.scroll_into_view_if_needed()
            target = ".dl-fig-field" if page.locator(".dl-fig-field").count() else ".dl-fig-frf"
            fsamples = []
            fkeys = ["ArrowRight", "ArrowLeft"]
            for i in range(4):
                ms = _move_and_time(page, fh, fkeys[i % 2], target)
                if ms is None and i == 0:
                    fkeys.reverse()
                    _settle(page)
                    ms = _move_and_time(page, fh, fkeys[0], target)
                assert ms is not None, f"moving the frequency control did not redraw {target}"
                fsamples.append(ms)
                _settle(page)
            timings["frequency_redraw_ms"] = [round(s, 1) for s in fsamples]
            timings["frequency_redraw_median_ms"] = round(statistics.median(fsamples), 1)
        else:
            timings["frequency_redraw_ms"] = "not attempted: 'frequency' control has no slider handle"

        # Screenshot of the dashboard itself, and a check that it is not blank.
        dash = page.locator(".dl-dashboard").first
        dash.scroll_into_view_if_needed()
        shot = tmp_path / "dashboard.png"
        png = dash.screenshot(path=str(shot))
        page.screenshot(path=str(tmp_path / "page.png"))
        shutil.copy(shot, "/tmp/dampline-browser-screenshot.png")
        stats = _distinct_colours(page, png)
        timings["screenshot"] = stats
        assert stats["width"] > 300 and stats["height"] > 200, stats
        assert stats["distinct"] >= 50 and stats["dominant_fraction"] < 0.995, \
            f"screenshot looks blank: {stats}"
        timings["total_s"] = round(time.perf_counter() - t_start, 2)
    except Exception:
        try:
            page.screenshot(path=str(tmp_path / "failure.png"))
            shutil.copy(tmp_path / "failure.png", "/tmp/dampline-browser-failure.png")
        except Exception:
            pass
        print("--- JupyterLab log (tail) ---\n" + lab_server.log_tail())
        print("--- browser console errors ---\n" + "\n".join(page.console_errors[-30:]))
        raise
    finally:
        text = json.dumps(timings, indent=1)
        (tmp_path / "timings.json").write_text(text)
        try:
            Path("/tmp/dampline-browser-timings.json").write_text(text)
        except OSError:
            pass
        print("dampline browser timings:", text)
        print("browser console errors:", page.console_errors[-10:])
        for k, v in timings.items():
            record_property(k, v)
