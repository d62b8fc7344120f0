"""Design records: ``python -m dampline record`` and ``dampline.record``.

A small notebook (a uniform steel bar, written here as TOML by hand) is executed in a
fresh kernel and recorded as an executed notebook and a self-contained HTML page. The
checks compare against things outside the record code: the model hash against
``hashlib.sha256`` of ``dl.dumps`` of a line built from the same dict; the versions
against ``importlib.metadata`` of this interpreter (the kernel runs it too); the printed
natural frequency against the closed form of a fixed-free bar; the widget views against
the widget state nbclient stored. The page itself is opened offline in a browser by
``tests/browser/test_record_browser.py``.

The npm scripts a page inlines are fetched once into the cache (``fetch_assets``); when
the registry cannot be reached these tests skip, except with ``CI=true``.
"""
from __future__ import annotations

import datetime as dt
import hashlib
import http.server
import importlib.metadata
import json
import math
import os
import platform
import re
import socket
import subprocess
import sys
import threading
from pathlib import Path

import pytest

for _mod in ("nbclient", "nbconvert", "nbformat", "ipykernel", "ipywidgets", "bqplot"):
    pytest.importorskip(_mod)

import nbformat  # noqa: E402

import dampline as dl  # noqa: E402
from dampline import cli  # noqa: E402
from dampline.assets import AssetError, NPM_ASSETS, asset_path, fetch_assets  # noqa: E402
from dampline.record import RecordError, record_model, record_notebook  # noqa: E402

IN_CI = os.environ.get("CI", "").strip().lower() == "true"
REPO = Path(__file__).resolve().parents[1]
STATE_KEY = "application/vnd.jupyter.widget-state+json"

# A uniform steel bar, fixed at x = 0 and free at x = L (our own example).
E, RHO, L = 2.1e11, 7850.0, 0.8
SPEC = {
    "title": "Record test bar",
    "kind": "axial",
    "segments": [{"length": L, "E": E, "rho": RHO, "area": 1.0e-4}],
    "ends": {"left": "fixed", "right": "free"},
    "damping": {"model": "loss_factor", "eta": 0.01},
}
# The same model written by hand: other key order, comments, spacing. Its hash must be
# that of the canonical text, not of these bytes.
BAR_TOML = """\
# hand-written model for the record tests
title = "Record test bar"
kind  = "axial"

[damping]
eta   = 0.01
model = "loss_factor"

[ends]
right = "free"
left  = "fixed"

[[segments]]
rho    = 7850.0
E      = 2.1e11
area   = 1.0e-4
length = 0.8
"""

STUDY_CELLS = [
    ("markdown", "# Record test\n\nA uniform bar; the dashboard and its first frequency."),
    ("code", 'import dampline as dl\n\nline = dl.load("bar.toml")\nd = dl.Dashboard(line)\nd'),
    ("code", "print(dl.natural_frequencies(line, count=2).tolist())"),
]


def _write_notebook(path: Path, cells) -> Path:
    nb = nbformat.v4.new_notebook()
    nb.cells = [nbformat.v4.new_markdown_cell(src) if kind == "markdown"
                else nbformat.v4.new_code_cell(src) for kind, src in cells]
    nb.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3 (ipykernel)",
                                 "language": "python"}
    nbformat.write(nb, path)
    return path


@pytest.fixture(scope="session")
def npm_assets():
    """The pinned npm scripts in the cache (fetched when missing)."""
    try:
        return fetch_assets()
    except AssetError as exc:
        if IN_CI:
            pytest.fail(f"CI=true but the npm scripts could not be fetched: {exc}", pytrace=False)
        pytest.skip(f"npm registry not reachable: {exc}")


@pytest.fixture(scope="module")
def recorded(npm_assets, tmp_path_factory):
    """The study notebook recorded once through the command line (in-process)."""
    folder = tmp_path_factory.mktemp("study")
    (folder / "bar.toml").write_text(BAR_TOML)
    src = _write_notebook(folder / "study.ipynb", STUDY_CELLS)
    html = folder / "out" / "study.html"
    before = dt.datetime.now(dt.timezone.utc).replace(microsecond=0)
    code = cli.main(["record", str(src), "--html", str(html)])
    after = dt.datetime.now(dt.timezone.utc)
    executed = folder / "study.executed.ipynb"
    page = html.read_text(encoding="utf-8") if html.exists() else ""
    info = re.search(r'<script[^>]*id="dampline-record-info"[^>]*>(.*?)</script>', page, re.S)
    return {
        "code": code, "folder": folder, "src": src, "html": html, "page": page,
        "executed": executed, "nb": nbformat.read(executed, as_version=4) if executed.exists() else None,
        "info": json.loads(info.group(1).replace("<\\/", "</")) if info else None,
        "window": (before, after),
    }


# --------------------------------------------------------------------------- notebook

def test_record_writes_executed_notebook_with_widget_state(recorded):
    assert recorded["code"] == 0
    nb = recorded["nb"]
    assert nb is not None, "no executed notebook beside the source"
    code_cells = [c for c in nb.cells if c.cell_type == "code"]
    assert [c.execution_count for c in code_cells] == [1, 2]
    assert all(c.outputs for c in code_cells)
    state = nb.metadata["widgets"][STATE_KEY]
    assert state["version_major"] == 2
    models = state["state"]
    assert any(m["model_module"] == "bqplot" and m["model_name"] == "FigureModel"
               for m in models.values())
    # every widget view in the outputs points at a model the stored state holds
    views = [o.data["application/vnd.jupyter.widget-view+json"]["model_id"]
             for c in code_cells for o in c.outputs
             if "application/vnd.jupyter.widget-view+json" in o.get("data", {})]
    assert views and all(v in models for v in views)
    # the bqplot lines travel as binary buffers (float64 arrays), kept in the state
    assert any(m.get("buffers") for m in models.values() if m["model_name"] == "LinesModel")
    # the source notebook itself is left as it was (no outputs)
    src = nbformat.read(recorded["src"], as_version=4)
    assert all(not c.get("outputs") for c in src.cells if c.cell_type == "code")


def test_printed_frequency_is_the_fixed_free_bar_closed_form(recorded):
    # fixed-free uniform bar: f_n = (2n - 1) c / (4 L), c = sqrt(E / rho)
    # (e.g. Rao, Mechanical Vibrations, longitudinal vibration of bars)
    out = "".join(o.get("text", "") for o in recorded["nb"].cells[-1].outputs)
    f1, f2 = json.loads(out)
    c = math.sqrt(E / RHO)
    assert f1 == pytest.approx(c / (4 * L), rel=1e-9)
    assert f2 == pytest.approx(3 * c / (4 * L), rel=1e-9)


def test_header_hash_versions_and_date(recorded):
    info = recorded["info"]
    assert info is not None, "no record info in the page"
    canonical = dl.dumps(dl.Line.from_dict(SPEC)).encode("utf-8")
    expected = hashlib.sha256(canonical).hexdigest()
    (model,) = info["models"]
    assert model["sha256"] == expected
    assert model["sha256"] != hashlib.sha256(BAR_TOML.encode()).hexdigest()  # not the bytes
    assert set(model["names"]) == {"line", "d.line"}
    assert (model["title"], model["kind"]) == (SPEC["title"], "axial")
    assert dl.record.model_hash(dl.load(recorded["folder"] / "bar.toml")) == expected
    for dist in ("numpy", "scipy", "ipywidgets", "bqplot", "dampline"):
        assert info["versions"][dist] == importlib.metadata.version(dist), dist
    assert info["versions"]["python"] == platform.python_version()
    when = dt.datetime.strptime(info["recorded_utc"], "%Y-%m-%dT%H:%M:%SZ").replace(
        tzinfo=dt.timezone.utc)
    before, after = recorded["window"]
    assert before <= when <= after
    assert info["source"] == "study.ipynb"
    # the same header travels in the executed notebook: metadata and a first cell
    nb = recorded["nb"]
    assert nb.metadata["dampline"]["record"] == info
    first = nb.cells[0]
    assert first.cell_type == "markdown" and "dampline-record-header" in first.metadata["tags"]
    for text in (expected, info["recorded_utc"], info["versions"]["numpy"],
                 info["versions"]["bqplot"], platform.python_version()):
        assert text in first.source


def test_html_shows_header_values(recorded):
    page, info = recorded["page"], recorded["info"]
    header = page[page.index('id="dampline-record-header"'):page.index("</section>")]
    for text in (info["models"][0]["sha256"], info["recorded_utc"],
                 *(info["versions"][k] for k in ("dampline", "numpy", "scipy", "ipywidgets",
                                                 "bqplot", "python"))):
        assert text in header
    # the header is not repeated as a cell on the page
    assert page.count('id="dampline-record-header"') == 1


def test_html_carries_its_scripts_and_no_network_address(recorded):
    page = recorded["page"]
    assert re.findall(r"<script\b[^>]*\bsrc\s*=", page, re.I) == []
    assert re.findall(r"<link\b[^>]*\bhref\s*=\s*[\"']?(?:https?:)?//", page, re.I) == []
    assert re.findall(r"<img\b[^>]*\bsrc\s*=\s*[\"']?(?:https?:)?//", page, re.I) == []
    for cdn in ("cdn.jsdelivr.net", "unpkg.com", "cdnjs.cloudflare.com", "googleapis.com/ajax"):
        assert cdn not in page.lower(), cdn
    modules = re.findall(r'<script[^>]*data-dampline-module="([^"]+)"', page)
    r, m = NPM_ASSETS["requirejs"], NPM_ASSETS["html-manager"]
    assert modules == [f"{r.package}@{r.version}", "bqplot", "bqscales",
                       f"{m.package}@{m.version}"]
    # the widget libraries are named AMD modules, as the manager asks for them
    assert 'define("bqplot",' in page and 'define("bqscales",' in page
    # the widget state is on the page
    state = re.search(r'<script type="application/vnd.jupyter.widget-state\+json">(.*?)</script>',
                      page, re.S)
    assert state and json.loads(state.group(1))["version_major"] == 2


def test_cached_assets_are_the_pinned_packages(npm_assets):
    # require.js announces its own version; the manager defines the ipywidgets 8 modules
    assert f"version = '{NPM_ASSETS['requirejs'].version}'" in asset_path("requirejs").read_text()
    embed = asset_path("html-manager").read_text()
    for mod in ("@jupyter-widgets/base", "@jupyter-widgets/controls",
                "@jupyter-widgets/html-manager"):
        assert f'define("{mod}"' in embed
    # the icon fonts are WOFF2 files (signature "wOF2")
    for role in ("font-solid-900", "font-regular-400"):
        assert asset_path(role).read_bytes()[:4] == b"wOF2"


def test_rerecord_in_place_keeps_one_header(recorded, tmp_path):
    src = tmp_path / "again.ipynb"
    (tmp_path / "bar.toml").write_text(BAR_TOML)
    src.write_bytes(recorded["executed"].read_bytes())
    res = record_notebook(src, inplace=True)
    assert res.notebook == src and res.html is None
    nb = nbformat.read(src, as_version=4)
    headers = [c for c in nb.cells if "dampline-record-header" in c.metadata.get("tags", [])]
    assert len(headers) == 1 and nb.cells[0] is headers[0]
    assert not list(tmp_path.glob("*.executed.ipynb"))


# --------------------------------------------------------------------------- failures

def test_missing_notebook_is_a_clear_error(tmp_path, capsys):
    missing = tmp_path / "nowhere" / "absent.ipynb"
    assert cli.main(["record", str(missing)]) == 2
    assert str(missing) in capsys.readouterr().err
    with pytest.raises(FileNotFoundError, match=re.escape(str(missing))):
        record_notebook(missing)
    # the module entry point gives the same exit code
    proc = subprocess.run([sys.executable, "-m", "dampline", "record", str(missing)],
                          capture_output=True, text=True, cwd=REPO, timeout=120)
    assert proc.returncode == 2 and str(missing) in proc.stderr


def test_bad_options_exit_2(tmp_path, capsys):
    nb = _write_notebook(tmp_path / "x.ipynb", [("code", "1")])
    with pytest.raises(SystemExit) as ex:
        cli.main(["record", str(nb), "--timeout", "-5"])
    assert ex.value.code == 2
    with pytest.raises(SystemExit) as ex:
        cli.main(["record", str(nb), "--inplace", "--output", str(tmp_path / "y.ipynb")])
    assert ex.value.code == 2
    with pytest.raises(SystemExit) as ex:
        cli.main([])
    assert ex.value.code == 2


def test_raising_cell_writes_nothing(npm_assets, tmp_path, capsys):
    src = _write_notebook(tmp_path / "broken.ipynb", [
        ("code", "x = 1\nprint('first cell ran')"),
        ("code", "raise ValueError('deliberate failure in the second cell')"),
        ("code", "print('never reached')"),
    ])
    before = src.read_bytes()
    html = tmp_path / "broken.html"
    assert cli.main(["record", str(src), "--html", str(html)]) == 1
    err = capsys.readouterr().err
    assert "cell 1" in err and "ValueError" in err and "deliberate failure" in err
    with pytest.raises(RecordError, match="deliberate failure"):
        record_notebook(src, html=html, inplace=True)
    # no executed notebook, no page, no temporary file, the source untouched
    assert sorted(p.name for p in tmp_path.iterdir()) == ["broken.ipynb"]
    assert src.read_bytes() == before


def _closed_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def test_unreachable_registry_names_cache_and_command(tmp_path, monkeypatch, capsys):
    cache = tmp_path / "empty-cache"
    monkeypatch.setenv("DAMPLINE_ASSETS", str(cache))
    monkeypatch.setenv("npm_config_registry", f"http://127.0.0.1:{_closed_port()}")
    src = _write_notebook(tmp_path / "n.ipynb", [("code", "1")])
    with pytest.raises(AssetError) as ex:
        record_notebook(src, html=tmp_path / "n.html")
    assert str(cache) in str(ex.value) and "python -m dampline assets" in str(ex.value)
    assert cli.main(["record", str(src), "--html", str(tmp_path / "n.html")]) == 3
    err = capsys.readouterr().err
    assert str(cache) in err and "python -m dampline assets" in err
    # it failed before the kernel ran: nothing written, not even an empty cache folder
    assert sorted(p.name for p in tmp_path.iterdir()) == ["n.ipynb"]


def test_tarball_with_wrong_integrity_is_refused(tmp_path, monkeypatch):
    # a local registry that serves a valid gzip tarball with the wrong contents
    import io
    import tarfile

    buf = io.BytesIO()
    with tarfile.open(fileobj=buf, mode="w:gz") as tar:
        data = b"window.evil = true;"
        ti = tarfile.TarInfo("package/require.js")
        ti.size = len(data)
        tar.addfile(ti, io.BytesIO(data))
    body = buf.getvalue()

    class Handler(http.server.BaseHTTPRequestHandler):
        def do_GET(self):
            self.send_response(200)
            self.send_header("Content-Length", str(len(body)))
            self.end_headers()
            self.wfile.write(body)

        def log_message(self, *args):
            pass

    server = http.server.HTTPServer(("127.0.0.1", 0), Handler)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    try:
        monkeypatch.setenv("npm_config_registry", f"http://127.0.0.1:{server.server_port}")
        cache = tmp_path / "cache"
        with pytest.raises(AssetError, match="sha512"):
            fetch_assets(cache)
        assert not cache.exists() or not any(p.is_file() for p in cache.rglob("*"))
    finally:
        server.shutdown()
        server.server_close()


# --------------------------------------------------------------------------- model records

def test_record_model_writes_model_notebook_and_page(npm_assets, tmp_path):
    line = dl.Line.from_dict(SPEC)
    res = record_model(line, tmp_path / "records", title="Bar for the record")
    folder = tmp_path / "records"
    assert res.notebook == folder / "bar-for-the-record.ipynb"
    assert res.html == folder / "bar-for-the-record.html"
    assert sorted(p.name for p in folder.iterdir()) == [
        "bar-for-the-record.html", "bar-for-the-record.ipynb", "bar-for-the-record.toml"]
    assert dl.load(folder / "bar-for-the-record.toml").to_dict() == line.to_dict()
    nb = nbformat.read(res.notebook, as_version=4)
    assert "Bar for the record" in nb.cells[1].source and "design question" in nb.cells[1].source
    assert STATE_KEY in nb.metadata["widgets"]
    # the printed modal table: first row is mode 1 at the fixed-free closed form c / (4 L)
    table = "".join(o.get("text", "") for o in nb.cells[-1].outputs).splitlines()
    assert table[0].split()[:2] == ["mode", "frequency"]
    mode, freq = table[1].split()[:2]
    assert float(mode) == 1
    assert float(freq) == pytest.approx(math.sqrt(E / RHO) / (4 * L), rel=1e-5)  # 6 digits
    assert len(table) == 1 + 8
    assert res.header["models"][0]["sha256"] == hashlib.sha256(
        dl.dumps(line).encode()).hexdigest()
    page = res.html.read_text()
    assert "Bar for the record" in page and 'define("bqplot",' in page


def test_import_stays_light():
    code = ("import sys, dampline, dampline.record, dampline.cli, dampline.assets; "
            "print(sorted(m for m in ('ipywidgets', 'bqplot', 'nbclient', 'nbconvert', "
            "'nbformat', 'jupyter_client') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         cwd=REPO, timeout=120, check=True).stdout.strip()
    assert out == "[]"
