"""Re-execute the design-record notebooks and save them with their outputs and widget state.

Usage (from anywhere)::

    python dashboards/rebuild.py              # every notebook in dashboards/
    python dashboards/rebuild.py horn demo    # some of them (name, file name or path)

Each notebook runs top to bottom in a fresh kernel of *this* Python interpreter, with the
notebook's folder as the working directory (so ``scenarios/<name>.toml`` resolves), this
checkout of dampline first on the path and one BLAS thread. The executed notebook is
written back in place only when every cell ran without error, with the widget state
stored in its metadata so the dashboards display without a running kernel. Execution
timestamps are not recorded, each cell's printed text is kept as one block, and the
Python version is left out of the metadata, so a rebuild on another machine changes only
what the computation changes. A notebook that fails is reported and left as it was; the
others are still rebuilt, and the exit status is 1.

The tests (tests/test_notebooks.py) re-run each notebook with nbval and compare its
printed numbers with the stored ones: after a change that moves a number, rebuild and
review the difference.
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
import time
from pathlib import Path

import nbformat
from jupyter_client import KernelManager
from jupyter_client.kernelspec import KernelSpec, KernelSpecManager
from nbclient import NotebookClient
from nbclient.exceptions import CellExecutionError

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
CELL_TIMEOUT_S = 600
# The records' matrices are small: one BLAS thread runs them fastest, and a pool of BLAS
# threads competing with other work slows a small eigenvalue problem tenfold. The tests
# re-run the notebooks with the same setting (a variable already set is left alone).
SINGLE_THREAD = {"OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}


class _ThisPython(KernelSpecManager):
    """Kernel specs that always start an IPython kernel in this interpreter, whatever
    kernels happen to be installed on the machine."""

    def get_kernel_spec(self, kernel_name):
        return KernelSpec(argv=[sys.executable, "-m", "ipykernel_launcher", "-f",
                                "{connection_file}"],
                          display_name="Python 3 (ipykernel)", language="python")


def notebooks(names: list[str]) -> list[Path]:
    """The notebooks named on the command line (all of dashboards/*.ipynb by default)."""
    if not names:
        return sorted(HERE.glob("*.ipynb"))
    out = []
    for name in names:
        p = Path(name)
        if not p.suffix:
            p = p.with_suffix(".ipynb")
        if not p.is_file():
            p = HERE / p.name
        if not p.is_file():
            raise SystemExit(f"rebuild: no notebook {name!r} (looked in {HERE})")
        out.append(p.resolve())
    return out


def _tidy(nb) -> None:
    """Keep the stored notebook free of machine-dependent noise."""
    nb.metadata["kernelspec"] = {"display_name": "Python 3 (ipykernel)", "language": "python",
                                 "name": "python3"}
    info = dict(nb.metadata.get("language_info", {}))
    info.pop("version", None)
    info.setdefault("name", "python")
    nb.metadata["language_info"] = info
    for cell in nb.cells:
        cell.metadata.pop("execution", None)


def rebuild(path: Path) -> float:
    """Execute one notebook in its own folder and write it back; returns seconds taken.
    Raises (file untouched) when a cell fails or the kernel does."""
    nb = nbformat.read(path, as_version=4)
    km = KernelManager(kernel_name="python3", kernel_spec_manager=_ThisPython())
    client = NotebookClient(nb, km=km, timeout=CELL_TIMEOUT_S, kernel_name="python3",
                            resources={"metadata": {"path": str(path.parent)}},
                            store_widget_state=True, record_timing=False, allow_errors=False,
                            coalesce_streams=True)    # one stdout block per cell, however it arrived
    t0 = time.perf_counter()
    try:
        client.execute(cwd=str(path.parent))
    finally:
        # a kernel manager handed to the client is ours to stop
        if km.has_kernel:
            km.shutdown_kernel()
    elapsed = time.perf_counter() - t0
    _tidy(nb)
    nbformat.validate(nb)
    # write next to the target, then replace it: a failed write never leaves half a file
    fd, tmp = tempfile.mkstemp(prefix=path.stem + ".", suffix=".ipynb.tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            nbformat.write(nb, fh)
        os.chmod(tmp, path.stat().st_mode & 0o777)     # mkstemp makes it private
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return elapsed


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("names", nargs="*", help="notebooks to rebuild (default: all)")
    args = parser.parse_args(argv)
    # the kernels inherit this environment: import this checkout's dampline first
    os.environ["PYTHONPATH"] = os.pathsep.join(
        filter(None, [str(REPO), os.environ.get("PYTHONPATH")]))
    os.environ.update({k: v for k, v in SINGLE_THREAD.items() if k not in os.environ})
    failed = []
    for path in notebooks(args.names):
        try:
            seconds = rebuild(path)
        except Exception as exc:   # a cell raised or timed out, the kernel died or never started
            failed.append(path.name)
            what = "" if isinstance(exc, CellExecutionError) else f"{type(exc).__name__}: "
            print(f"FAILED {path.name} (left unchanged):\n{what}{exc}", file=sys.stderr)
            continue
        print(f"rebuilt {path.name} in {seconds:.1f} s")
    if failed:
        print(f"rebuild: {len(failed)} notebook(s) failed: {', '.join(failed)}", file=sys.stderr)
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
