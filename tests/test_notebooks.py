"""The design-record notebooks in dashboards/ still reproduce.

Each notebook is re-run by nbval in a fresh kernel (this interpreter, the notebook's own
folder as working directory) and every printed output is compared with the one stored
in the file; ``dashboards/nbval_sanitize.cfg`` masks the text that is not the
computation's (a widget's plain-text fallback, model ids, addresses), and nbval itself
skips the widget views. A record whose numbers have moved fails here: rebuild it with
``python dashboards/rebuild.py`` and review the difference.

The other checks: a stored number changed by hand makes nbval fail (the comparison can
fail); every widget view a notebook shows has its state stored, so the saved file
displays without a kernel; rebuild.py writes outputs and widget state, and leaves a
notebook whose cell raises untouched. Requires nbval (the ``test`` extra); without it
these tests skip, except under ``CI=true``.
"""

from __future__ import annotations

import importlib.util
import json
import os
import re
import shutil
import subprocess
import sys
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest

import dampline as dl

REPO = Path(__file__).resolve().parents[1]
DASHBOARDS = REPO / "dashboards"
SANITIZE = DASHBOARDS / "nbval_sanitize.cfg"
NOTEBOOKS = sorted(DASHBOARDS.glob("*.ipynb"))
SCENARIOS = sorted((DASHBOARDS / "scenarios").glob("*.toml"))
IN_CI = os.environ.get("CI", "").strip().lower() == "true"
WIDGET_VIEW = "application/vnd.jupyter.widget-view+json"
WIDGET_STATE = "application/vnd.jupyter.widget-state+json"
SINGLE_THREAD = {"OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}


@pytest.fixture(scope="module")
def nbval():
    missing = [m for m in ("nbval", "nbclient", "ipykernel") if importlib.util.find_spec(m) is None]
    if missing:
        msg = f"notebook checks need {', '.join(missing)} (pip install -e .[dashboard,test])"
        if IN_CI:
            pytest.fail("CI=true but " + msg, pytrace=False)
        pytest.skip(msg)


def _env() -> dict:
    env = dict(os.environ)
    # the kernels must import this checkout's dampline
    env["PYTHONPATH"] = os.pathsep.join(filter(None, [str(REPO), env.get("PYTHONPATH")]))
    # the BLAS threading rebuild.py executes the notebooks with
    for key, value in SINGLE_THREAD.items():
        env.setdefault(key, value)
    return env


def run_nbval(*targets: str, cwd: Path) -> subprocess.CompletedProcess:
    """nbval on the given notebooks (or ``notebook::Cell n`` node ids) in a pytest
    subprocess; returns the finished process with its text output."""
    # options with their values joined by "=": a path given as a separate argument
    # would count towards pytest's root folder and garble the reported cell ids
    cmd = [sys.executable, "-m", "pytest", "-p", "no:cacheprovider", "-q", "-rA", f"--rootdir={cwd}",
           "--nbval", "--nbval-current-env", f"--nbval-sanitize-with={SANITIZE}",
           "--nbval-cell-timeout=600", *targets]
    return subprocess.run(cmd, cwd=cwd, env=_env(), capture_output=True, text=True, timeout=900)


def _code_cells(path: Path) -> list[dict]:
    nb = json.loads(path.read_text(encoding="utf-8"))
    return [c for c in nb["cells"] if c["cell_type"] == "code"]


def test_one_record_per_scenario():
    """Every scenario model is loaded, by its path beside the notebooks, by a notebook that
    shows it in the dashboard; together they cover every kind of line."""
    sources = {p.name: "\n".join("".join(c["source"]) for c in _code_cells(p)) for p in NOTEBOOKS}
    kinds = set()
    for toml in SCENARIOS:
        users = [n for n, s in sources.items() if f'dl.load("scenarios/{toml.name}")' in s]
        assert users, f"no notebook loads scenarios/{toml.name}"
        assert all("dl.Dashboard(" in sources[n] for n in users), users
        kinds.add(dl.load(toml).kind)
    assert kinds == {"axial", "torsion", "string", "duct", "bending"}
    assert "demo.ipynb" in sources                  # the README's main job


@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.stem)
def test_saved_executed_with_widget_state(path):
    """Stored with outputs, no errors, and the state of every widget it shows, so the
    saved file displays without a kernel."""
    nb = json.loads(path.read_text(encoding="utf-8"))
    cells = _code_cells(path)
    assert cells and all(c["execution_count"] is not None for c in cells), "not executed"
    outputs = [o for c in cells for o in c["outputs"]]
    assert not [o for o in outputs if o["output_type"] == "error"]
    assert not [o for o in outputs if o.get("name") == "stderr"], "a cell wrote to stderr"
    views = [o["data"][WIDGET_VIEW]["model_id"] for o in outputs if WIDGET_VIEW in o.get("data", {})]
    assert views, "no widget view stored"
    state = nb["metadata"]["widgets"][WIDGET_STATE]["state"]
    assert set(views) <= set(state)
    # and every model those widgets refer to (children, scales, axes, marks, layouts)
    refs = set(re.findall(r'"IPY_MODEL_([0-9a-f]+)"', json.dumps(state)))
    assert refs and refs <= set(state), sorted(refs - set(state))[:5]


@pytest.fixture(scope="module")
def nbval_runs(nbval, request):
    """nbval on every selected notebook, started together (as many at a time as there are
    CPUs): a future per notebook, which its test waits for."""
    selected = [p for p in NOTEBOOKS
                if any(getattr(item, "originalname", None) == "test_record_reproduces"
                       and item.callspec.params.get("path") == p for item in request.session.items)]
    workers = max(1, min(len(selected), os.cpu_count() or 1))
    with ThreadPoolExecutor(max_workers=workers) as pool:
        yield {p: pool.submit(run_nbval, str(p), cwd=REPO) for p in selected}


@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.stem)
def test_record_reproduces(nbval_runs, path):
    run = nbval_runs[path].result()
    n_cells = len(_code_cells(path))
    report = run.stdout[-6000:] + run.stderr[-2000:]
    assert run.returncode == 0, f"{path.name} no longer reproduces:\n{report}"
    # every code cell ran and was compared: none skipped or deselected
    assert re.search(rf"\b{n_cells} passed\b", run.stdout), report


def test_a_changed_number_fails(nbval, tmp_path):
    """Change one digit of a stored printed number: nbval must fail on that cell, and
    say that its printed output differs, showing the stored and the fresh value."""
    src = NOTEBOOKS[0]
    shutil.copytree(DASHBOARDS / "scenarios", tmp_path / "scenarios")
    nb = json.loads(src.read_text(encoding="utf-8"))
    code = [c for c in nb["cells"] if c["cell_type"] == "code"]
    stream = next(o for o in code[0]["outputs"] if o["output_type"] == "stream")
    text = "".join(stream["text"])
    m = re.search(r"\d+\.\d+", text)
    assert m, f"cell 0 of {src.name} prints no decimal number"
    old = m.group(0)
    new = old[:-1] + str((int(old[-1]) + 1) % 10)
    stream["text"] = text[:m.start()] + new + text[m.end():]
    (tmp_path / "changed.ipynb").write_text(json.dumps(nb, indent=1), encoding="utf-8")

    run = run_nbval("changed.ipynb::Cell 0", cwd=tmp_path)
    out = run.stdout + run.stderr
    assert run.returncode == 1, out[-4000:]
    assert re.search(r"^FAILED changed\.ipynb::Cell 0", run.stdout, flags=re.M), out[-4000:]
    assert "mismatch 'stdout'" in out, out[-4000:]
    assert new in out and old in out, out[-4000:]     # the report shows both values


def _rebuild(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, str(DASHBOARDS / "rebuild.py"), *args], env=_env(),
                          capture_output=True, text=True, timeout=600)


def test_rebuild_stores_outputs_and_widget_state(nbval, tmp_path):
    """rebuild.py runs a notebook in its own folder and saves outputs and widget state;
    a notebook whose cell raises is reported and left as it was."""
    import nbformat
    from nbformat.v4 import new_code_cell, new_notebook

    shutil.copytree(DASHBOARDS / "scenarios", tmp_path / "scenarios")
    nb = new_notebook(cells=[
        new_code_cell('import dampline as dl\nline = dl.load("scenarios/stay_cable.toml")\n'
                      'print(f"{dl.natural_frequencies(line, 1)[0]:.4f} Hz")'),
        new_code_cell("d = dl.Dashboard(line, n_freq=200)\nd"),
    ])
    good = tmp_path / "good.ipynb"
    nbformat.write(nb, good)
    good.chmod(0o644)
    bad = tmp_path / "bad.ipynb"
    nbformat.write(new_notebook(cells=[new_code_cell("raise RuntimeError('stop here')")]), bad)
    before = bad.read_bytes()
    run = _rebuild(str(bad), str(good))
    assert run.returncode == 1, run.stdout + run.stderr
    assert "bad.ipynb" in run.stderr and "stop here" in run.stderr
    assert bad.read_bytes() == before

    assert "rebuilt good.ipynb" in run.stdout, run.stdout + run.stderr
    assert (good.stat().st_mode & 0o777) == 0o644
    saved = nbformat.read(good, as_version=4)
    cells = saved.cells
    # Mersenne's law, f1 = sqrt(T / mu) / (2 L) (Kinsler et al., Fundamentals of Acoustics, ch. 2)
    seg = dl.load(tmp_path / "scenarios" / "stay_cable.toml").segments[0]
    f1 = (seg.tension / seg.mass_per_length) ** 0.5 / (2 * seg.length)
    assert cells[0].outputs[0]["text"] == f"{f1:.4f} Hz\n"
    view = cells[1].outputs[0]["data"][WIDGET_VIEW]["model_id"]
    assert view in saved.metadata["widgets"][WIDGET_STATE]["state"]
    assert "execution" not in cells[0].metadata and "version" not in saved.metadata.language_info
