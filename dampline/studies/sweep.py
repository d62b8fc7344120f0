"""Parameter sweeps: the FRF of a line as one or more model values change.

``dl.sweep(line, "segments.1.length", np.linspace(0.2, 0.4, 50), freqs, ...)``
edits the model dict of ``line`` (the one ``line.to_dict()`` gives and a model
TOML file holds) at a dotted path, builds and validates every variant, and
returns a :class:`Sweep` holding the complex FRF of each, shape
(n_values, n_freq, n_resp). Several paths combine as a full grid (``mode="grid"``)
or pair element by element (``mode="paired"``).

How the variants are computed (``method="exact"``): variants are stacked along
the batch axis of the exact dynamic stiffness solve
(:func:`dampline.solve.batch.exact_variants`). Variants that share the mesh
topology -- any change of a damping value, a point value (mass, spring, dashpot,
absorber, end table), a material or section value, or a length that moves no
node across a drive or response point -- are solved in one stack, and work that
does not depend on the changed value (the stiffness of unchanged pieces, interior
weights, point terms) is done once. Only variants whose topology differs (a
length change that moves an attachment onto an end, a value that switches a
point term on or off) are solved in separate stacks, one per topology. With
``method="modal"`` the variants are looped one by one through ``dl.frf``, but the
modes are computed once for all variants that share the undamped model (a
damping sweep computes them once).

Memory is bounded by chunking over variants (``chunk=`` variants at a time,
chosen by default so that the temporaries stay under about 200 MB); with a
``dask.distributed`` ``client`` the chunks run on its workers (each receives
model dicts and the frequencies, not arrays, and checks its variants itself) and the results come back in
order, identical to a local run.
"""

from __future__ import annotations

import math
import os
import re
import sys
import time
from dataclasses import dataclass, field
from typing import Any, Literal, Sequence

import numpy as np

from ..errors import ModelError
from ..model.line import Line, unit_of

__all__ = ["sweep", "Sweep", "SweepPeaks", "sweep_paths", "path_unit"]

#: temporaries per chunk (bytes) the default chunk size aims at
_CHUNK_BYTES = 200e6
#: largest default chunk (variants): keeps the progress bar and a dask cluster busy
_CHUNK_MAX = 256


# ------------------------------------------------------------------ paths
def _split(path: str) -> list[str]:
    """``segments[1].length`` or ``segments.1.length`` -> ['segments', '1', 'length']."""
    return [p for p in re.sub(r"\[(\d+)\]", r".\1", path).split(".") if p != ""]


def path_unit(path: str, kind: str) -> str:
    """SI unit of the value at a dotted model path (as the model's messages name it)."""
    parts = _split(path)
    names = [p for p in parts if not p.isdigit()]
    if not names:
        return ""
    if "section" in names[:-1] and names[-1] != "shape":
        return "m"                              # every section dimension is a length
    if names[-1] == "pairs":                    # damping.pairs[j][0] Hz, [j][1] zeta
        return "Hz" if parts[-1] == "0" else unit_of("zeta")
    if names[-1] in ("mass", "damping", "stiffness") and "absorber" in names:
        return unit_of(names[-1], kind)
    return unit_of(names[-1], kind)


def sweep_paths(line: Line) -> dict[str, str]:
    """Every dotted path of ``line.to_dict()`` that holds a number (what ``dl.sweep`` can
    vary), with its SI unit: ``{"segments.0.length": "m", ...}``."""
    return {p: path_unit(p, line.kind) for p in _numeric_paths(line)}


def _numeric_paths(line: Line) -> list[str]:
    out: list[str] = []

    def walk(node: Any, prefix: str) -> None:
        if isinstance(node, dict):
            for k, v in node.items():
                walk(v, f"{prefix}.{k}" if prefix else str(k))
        elif isinstance(node, list):
            for i, v in enumerate(node):
                walk(v, f"{prefix}.{i}")
        elif isinstance(node, (int, float)) and not isinstance(node, bool):
            out.append(prefix)

    walk(line.to_dict(), "")
    return out


def _resolve(spec: dict, path: str, values: np.ndarray, kind: str) -> tuple[Any, Any]:
    """(container, key) of the leaf at ``path``; ModelError naming path, values, unit."""
    unit = path_unit(path, kind)
    shown = values.tolist() if values.size <= 6 else values[:6].tolist() + ["..."]
    if not isinstance(path, str) or not path.strip():
        raise ModelError("path", path, "", "must be a dotted model path such as "
                         "'segments.0.length'")
    parts = _split(path)
    node: Any = spec
    walked = []
    for i, part in enumerate(parts):
        last = i == len(parts) - 1
        here = ".".join(walked) or "the model"
        if isinstance(node, dict):
            if part not in node:
                if last and node is not spec:
                    # a key this table may hold but does not set yet (an optional
                    # value): the variant's validation decides whether it belongs
                    return node, part
                raise ModelError(path, shown, unit, f"no key {part!r} in {here} (keys: "
                                 f"{', '.join(map(str, node))})")
            if last:
                leaf = node[part]
                if isinstance(leaf, bool) or not isinstance(leaf, (int, float)):
                    raise ModelError(path, shown, unit, f"{path} holds {leaf!r}, not a number: "
                                     "only numeric values can be swept")
                return node, part
            node = node[part]
        elif isinstance(node, list):
            if not part.isdigit():
                raise ModelError(path, shown, unit, f"{here} is a list: expected an index, "
                                 f"got {part!r}")
            j = int(part)
            if j >= len(node):
                raise ModelError(path, shown, unit, f"index {j} is out of range: {here} has "
                                 f"{len(node)} entries")
            if last:
                leaf = node[j]
                if isinstance(leaf, bool) or not isinstance(leaf, (int, float)):
                    raise ModelError(path, shown, unit, f"{path} holds {leaf!r}, not a number")
                return node, j
            node = node[j]
        else:
            raise ModelError(path, shown, unit, f"{here} is {node!r}, not a table: "
                             f"{'.'.join(parts[i:])} does not exist under it")
        walked.append(part)
    raise ModelError(path, shown, unit, "does not name a value")


def _check_values(path: str, values, kind: str) -> np.ndarray:
    unit = path_unit(path, kind) if isinstance(path, str) else ""
    try:
        v = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise ModelError(path, values, unit, "values must be a 1-D array of numbers") from None
    if v.ndim == 0:
        v = v.reshape(1)
    if v.ndim != 1:
        raise ModelError(path, v.shape, unit, "values must be a 1-D array")
    if v.size == 0:
        raise ModelError(path, [], unit, "no values to sweep")
    bad = ~np.isfinite(v)
    if bad.any():
        raise ModelError(path, float(v[bad][0]), unit, "values must be finite")
    return v


def _variant_table(paths: list[str], values: list[np.ndarray], mode: str) -> np.ndarray:
    """(n_variants, n_paths): the full grid (first path slowest) or the pairs."""
    if mode == "grid":
        mesh = np.meshgrid(*values, indexing="ij")
        return np.column_stack([m.ravel() for m in mesh])
    if mode == "paired":
        n = {len(v) for v in values}
        if len(n) != 1:
            raise ModelError("values", [len(v) for v in values], "",
                             f"mode 'paired' needs equally long value arrays for "
                             f"{', '.join(paths)}")
        return np.column_stack(values)
    raise ModelError("mode", mode, "", "use 'grid' or 'paired'")


def _tree_copy(node: Any) -> Any:
    """Copy of a model dict's tree of dicts and lists (the leaves are immutable)."""
    if isinstance(node, dict):
        return {k: _tree_copy(v) for k, v in node.items()}
    if isinstance(node, list):
        return [_tree_copy(v) for v in node]
    return node


def _build(base: dict, targets: list, row: np.ndarray) -> dict:
    spec = _tree_copy(base)
    for (keys, key), v in zip(targets, row):
        node = spec
        for k in keys:
            node = node[k]
        node[key] = float(v)
    return spec


def _targets(spec: dict, paths: list[str], values: list[np.ndarray], kind: str) -> list:
    """For each path, (keys to its container, leaf key), checked once on the base dict."""
    out = []
    for path, v in zip(paths, values):
        _resolve(spec, path, v, kind)
        parts = _split(path)
        keys = [int(p) if p.isdigit() and isinstance(_walk(spec, parts[:i]), list) else p
                for i, p in enumerate(parts)]
        out.append((keys[:-1], keys[-1]))
    return out


def _walk(spec: Any, parts: list[str]) -> Any:
    node = spec
    for p in parts:
        node = node[int(p)] if isinstance(node, list) else node[p]
    return node


def _blame(paths: list[str], row: np.ndarray, kind: str, exc: ModelError) -> ModelError:
    """A ModelError naming the swept path (the one the model complained about when it
    can tell), the value and its unit, with the model's own reason."""
    key = _split(str(exc.key))
    pick = 0
    for i, p in enumerate(paths):
        if _split(p) == key or _split(p)[-1:] == key[-1:]:
            pick = i
            break
    others = ", ".join(f"{p} = {v:g}" for j, (p, v) in enumerate(zip(paths, row)) if j != pick)
    where = f" (with {others})" if others else ""
    return ModelError(paths[pick], float(row[pick]), path_unit(paths[pick], kind),
                      f"makes the model invalid{where}: {exc}")


# ------------------------------------------------------------------ progress
class _Progress:
    """A small progress display: an ipywidgets IntProgress when running inside a
    Jupyter kernel (and ipywidgets is importable), else a carriage-return line on
    stderr. ipywidgets is imported only here, when a bar is actually shown."""

    def __init__(self, total: int, label: str = "sweep") -> None:
        self.total = max(1, total)
        self.done = 0
        self.label = label
        self.widget = None
        self.t0 = time.perf_counter()
        if _in_kernel():
            try:
                import ipywidgets as widgets
                from IPython.display import display
                self.widget = widgets.IntProgress(value=0, min=0, max=self.total,
                                                  description=label)
                display(self.widget)
            except Exception:       # no widgets front end: fall back to text
                self.widget = None
        self._show()

    def update(self, n: int = 1) -> None:
        self.done = min(self.total, self.done + n)
        self._show()

    def _show(self) -> None:
        if self.widget is not None:
            self.widget.value = self.done
            return
        pct = 100.0 * self.done / self.total
        sys.stderr.write(f"\r{self.label}: {self.done}/{self.total} chunks ({pct:3.0f}%), "
                         f"{time.perf_counter() - self.t0:.1f} s")
        sys.stderr.flush()

    def close(self) -> None:
        if self.widget is not None:
            self.widget.bar_style = "success"
        else:
            sys.stderr.write("\n")
            sys.stderr.flush()


def _in_kernel() -> bool:
    if "ipykernel" not in sys.modules:
        return False
    try:
        from IPython import get_ipython
        ip = get_ipython()
        return ip is not None and hasattr(ip, "kernel")
    except Exception:
        return False


# ------------------------------------------------------------------ engine entry
def _checked(specs: list[dict], rows: np.ndarray, ctx: dict) -> list[Line]:
    """The variants' Lines, each checked: a valid model on which the request holds (a
    shorter line may leave a response point off its end); a ModelError names the
    variant's swept values."""
    from ..checks import positions as check_position
    from ..solve.exact import check_request
    lines = []
    for spec, row in zip(specs, rows):
        try:
            variant = Line.from_dict(spec)
            check_request(variant, ctx["drive"], ctx["quantity"], ctx["drive_at"])
            check_position(variant, "response_at", ctx["response_at"])
            if ctx["method"] == "exact" and variant.damping.model == "modal":
                raise ModelError("damping.model", "modal", "", "modal damping (zeta per "
                                 "mode) has no exact distributed form; use method='modal'")
        except ModelError as exc:
            raise _blame(ctx["paths"], row, ctx["kind"], exc) from None
        lines.append(variant)
    return lines


def _run_chunk(specs: list[dict], freqs: np.ndarray, request: dict, check=None):
    """Solve one chunk of variants (model dicts) -> ('ok', array) or ('error', fields).

    ``check`` = (rows, context) checks each variant as :func:`_checked` does. Runs
    locally or on a dask worker; a ModelError travels back as its fields (key,
    value, unit, reason) so that it is raised with the same message."""
    try:
        with _heap_kept():
            if check is None:
                lines = [Line.from_dict(s) for s in specs]
            else:
                lines = _checked(specs, *check)
            return "ok", _solve(lines, freqs, request)
    except ModelError as exc:
        return "error", (exc.key, exc.value, exc.unit, exc.reason)


#: glibc mallopt parameters and its fixed default mmap threshold (bytes)
_M_TRIM_THRESHOLD, _M_MMAP_THRESHOLD, _GLIBC_MMAP_DEFAULT = -1, -3, 128 * 1024


class _heap_kept:
    """Keep freed memory in the heap while a chunk is solved, in a process whose glibc
    allocator was fixed by the environment.

    dask's nanny starts each worker with ``MALLOC_TRIM_THRESHOLD_=65536`` (its
    ``distributed.nanny.pre-spawn-environ``), which also switches off glibc's
    adaptive mmap threshold: every temporary over 128 kB of the batched solve is then
    mapped, page-faulted and unmapped again, and a worker ran the sweep at half the
    speed of a plain process (measured: 3.0 s against 1.5 s for 300 variants). While
    the chunk runs, the two thresholds are raised (mallopt); afterwards they are put
    back to the environment's values and the heap is trimmed (malloc_trim), so the
    worker returns its memory as dask intends. A process without those variables
    (a plain Python session) is left alone, as is any other C library."""

    def __enter__(self):
        self._libc = None
        env = os.environ
        if "MALLOC_TRIM_THRESHOLD_" not in env and "MALLOC_MMAP_THRESHOLD_" not in env:
            return self
        try:
            import ctypes
            libc = ctypes.CDLL(None)
            mallopt, trim = libc.mallopt, libc.malloc_trim
        except (OSError, AttributeError):
            return self
        try:
            self._restore = (int(env.get("MALLOC_TRIM_THRESHOLD_", 128 * 1024)),
                             int(env.get("MALLOC_MMAP_THRESHOLD_", _GLIBC_MMAP_DEFAULT)))
        except ValueError:
            return self
        # 32 MiB is the largest mmap threshold glibc accepts on 64-bit systems
        if mallopt(_M_MMAP_THRESHOLD, 32 * 2 ** 20) and mallopt(_M_TRIM_THRESHOLD, 2 ** 30):
            self._libc = (mallopt, trim)
        return self

    def __exit__(self, *exc):
        if self._libc is not None:
            mallopt, trim = self._libc
            mallopt(_M_TRIM_THRESHOLD, self._restore[0])
            mallopt(_M_MMAP_THRESHOLD, self._restore[1])
            trim(0)
        return False


def _solve(lines: list[Line], f: np.ndarray, request: dict) -> np.ndarray:
    method = request["method"]
    if method == "exact":
        from ..solve.batch import exact_variants
        return exact_variants(lines, f, request["drive_at"], request["response_at"],
                              request["drive"], request["quantity"])
    from ..solve import frf, modes as compute_modes
    from ..solve.modal import _skeleton
    options = dict(request["options"])
    count = options.pop("modes", None)
    shared: dict = {}
    out = []
    for line in lines:
        m = count
        if isinstance(count, (int, np.integer)) and not isinstance(count, bool):
            # one ModeSet per undamped model (and absorber damping, which the modal
            # projection reads from the mesh of the modes)
            key = repr((_skeleton(line), [a.absorber for a in line.attachments]))
            if key not in shared:
                shared[key] = compute_modes(line, int(count))
            m = shared[key]
        H = frf(line, f, drive_at=request["drive_at"], response_at=request["response_at"],
                drive=request["drive"], quantity=request["quantity"], method="modal", modes=m,
                **options)
        out.append(np.asarray(H))
    return np.stack(out)


def _default_chunk(line: Line, n_freq: int, n_resp: int, method: str) -> int:
    from ..solve.batch import variant_bytes
    per = variant_bytes(line, n_freq, n_resp)
    if method == "modal":
        per = max(per, 16 * n_freq * (n_resp + 8) * 8)
    return int(max(1, min(_CHUNK_MAX, _CHUNK_BYTES // max(per, 1))))


# ------------------------------------------------------------------ public
def sweep(line: Line, path: str | Sequence[str], values, freqs, drive_at: float = 0.0,
          response_at=(0.0,), drive: str = "force", quantity: str | None = None,
          method: Literal["exact", "modal"] = "exact", client=None, chunk: int | None = None,
          progress: bool | None = None, mode: Literal["grid", "paired"] = "grid",
          **options) -> "Sweep":
    """FRF of ``line`` for every value of one or more model parameters.

    Parameters
    ----------
    line : Line
        The base model.
    path : str or list of str
        Dotted path(s) into ``line.to_dict()``: ``"segments.1.length"``,
        ``"damping.eta"``, ``"attachments.0.mass"``, ``"ends.right.spring"``,
        ``"segments.0.section.diameter"`` (``segments[1].length`` works too). A key a
        table may hold but does not set yet (``attachments.0.dashpot``) may be given.
    values : array_like or list of array_like
        The values (SI units of the path), 1-D; with several paths a list of 1-D arrays.
    freqs : array_like
        Frequencies (Hz), positive and finite.
    drive_at, response_at, drive, quantity
        As for :func:`dampline.frf` (m, m, drive kind, quantity name).
    method : {"exact", "modal"}
        ``"modal"`` needs ``modes=`` (a count: computed once per undamped model, or a
        ModeSet) and takes ``coupling=`` and ``residual=`` as ``dl.frf`` does.
    client : dask.distributed.Client, optional
        Run the chunks on its workers; results are gathered in order and equal a
        local run.
    chunk : int, optional
        Variants per chunk; default: as many as keep the temporaries under ~200 MB.
    progress : bool, optional
        Show a progress bar (a widget in a notebook, a text line on stderr otherwise);
        default: only when there are more than two chunks.
    mode : {"grid", "paired"}
        Several paths: every combination (first path slowest) or element by element.

    Returns
    -------
    Sweep
        ``.frf`` complex (n_values, n_freq, n_resp), ``.values`` (n_values, n_paths).

    Raises
    ------
    ModelError
        A path that does not exist or holds no number, a value that makes the model
        invalid (naming path, value and unit), or a bad request (as ``dl.frf``).

    Notes
    -----
    Variants sharing the mesh topology are solved in one stack of the exact
    dynamic stiffness solve; variants whose topology differs are solved in
    separate stacks, and ``method="modal"`` loops over the variants (sharing the
    modes) -- see the module docstring.
    """
    from ..checks import positions as check_position
    from ..solve.exact import check_request
    if not isinstance(line, Line):
        raise ModelError("line", type(line).__name__, "", "dl.sweep needs a dampline.Line")
    if method not in ("exact", "modal"):
        raise ModelError("method", method, "", "use 'exact' or 'modal'")
    if mode not in ("grid", "paired"):
        raise ModelError("mode", mode, "", "use 'grid' or 'paired'")
    if method == "exact" and options:
        key = next(iter(options))
        raise ModelError(key, options[key], "", "unknown option for method 'exact'")
    if method == "modal":
        for key in options:
            if key not in ("modes", "coupling", "residual"):
                raise ModelError(key, options[key], "", "unknown option for method 'modal' "
                                 "(use modes, coupling, residual)")
        if options.get("modes") is None:
            raise ModelError("modes", None, "", "method 'modal' needs modes= (a count or a "
                             "ModeSet from dl.modes)")
    kind = line.kind
    if isinstance(path, str):
        paths = [path]
        value_list = [_check_values(path, values, kind)]
    else:
        paths = list(path)
        if not paths:
            raise ModelError("path", path, "", "give at least one model path")
        for p in paths:
            if not isinstance(p, str):
                raise ModelError("path", p, "", "must be a dotted model path such as "
                                 "'segments.0.length'")
        if isinstance(values, np.ndarray) or not isinstance(values, (list, tuple)) \
                or len(values) != len(paths):
            raise ModelError("values", values, "", f"give one array of values per path "
                             f"({len(paths)} paths)")
        value_list = [_check_values(p, v, kind) for p, v in zip(paths, values)]
    if len(set(_split_key(p) for p in paths)) != len(paths):
        raise ModelError("path", paths, "", "a path is given twice")
    from ..solve.batch import frequencies
    f = frequencies(freqs)
    base = line.to_dict()
    targets = _targets(base, paths, value_list, kind)
    table = _variant_table(paths, value_list, mode)

    request = {"method": method, "drive_at": drive_at, "response_at": response_at,
               "drive": drive, "quantity": quantity, "options": options}

    def variants(a: int, b: int) -> tuple[list[dict], list[Line]]:
        """Build and check variants a..b-1."""
        specs = [_build(base, targets, row) for row in table[a:b]]
        return specs, _checked(specs, table[a:b], context())

    def context() -> dict:
        return {"paths": paths, "kind": kind, "drive": drive, "quantity": quantity,
                "drive_at": drive_at, "response_at": response_at, "method": method}

    # the request as the variants see it (the base line itself need not satisfy it:
    # a response point may lie past its end but on every swept variant)
    first = variants(0, 1)[1][0]
    drive, quantity, _xd, _side = check_request(first, drive, quantity, drive_at)
    xr = check_position(first, "response_at", response_at)
    request.update(drive=drive, quantity=quantity)
    if chunk is None:
        chunk = _default_chunk(line, f.size, xr.size, method)
    elif isinstance(chunk, bool) or not isinstance(chunk, (int, np.integer)) or chunk < 1:
        raise ModelError("chunk", chunk, "variants", "must be a positive whole number")
    n = len(table)
    bounds = [(a, min(n, a + int(chunk))) for a in range(0, n, int(chunk))]
    show = (len(bounds) > 2) if progress is None else bool(progress)
    specs: list[dict] = []
    if client is None:
        # every variant is checked before any is solved: bad input fails fast
        checked = [variants(a, b) for a, b in bounds]
        bar = _Progress(len(bounds)) if show else None
        parts = []
        try:
            for spec_c, lines_c in checked:
                specs += spec_c
                parts.append(_solve(lines_c, f, request))
                if bar:
                    bar.update()
        finally:
            if bar:
                bar.close()
    else:
        # each chunk goes to the workers as soon as its model dicts are built; the
        # workers check them (the same checks, the same message naming the variant)
        # and solve them, so that this process, which shares the machine with them,
        # does little more than the bookkeeping. A bad variant raises when its chunk
        # comes back, and the chunks still queued are cancelled.
        futures = []
        ctx = context()
        try:
            for a, b in bounds:
                spec_c = [_build(base, targets, row) for row in table[a:b]]
                specs += spec_c
                futures.append(client.submit(_run_chunk, spec_c, f, request,
                                             (table[a:b], ctx), pure=False))
        except BaseException:
            client.cancel(futures)
            raise
        bar = _Progress(len(bounds)) if show else None
        try:
            parts = _gather(client, futures, bar)
        except BaseException:
            client.cancel(futures)
            raise
        finally:
            if bar:
                bar.close()
    H = np.concatenate(parts, axis=0)

    from ..solve.exact import quantity_unit
    return Sweep(paths=tuple(paths), values=table, units=tuple(path_unit(p, kind) for p in paths),
                 frequencies=f, frf=H, response_at=xr, drive_at=float(drive_at), drive=drive,
                 quantity=quantity, unit=quantity_unit(kind, quantity, drive), method=method,
                 kind=kind, mode=mode, models=tuple(specs))


def _split_key(path: str) -> tuple:
    return tuple(_split(path))


def _check(result) -> np.ndarray:
    status, payload = result
    if status == "ok":
        return payload
    key, value, unit, reason = payload
    raise ModelError(key, value, unit, reason)


def _gather(client, futures, bar) -> list[np.ndarray]:
    """Results of the dask futures in submission order. Each is fetched as soon as it
    is done, so that moving the arrays overlaps the work still running (gathering
    them all at the end left the workers idle for the whole transfer)."""
    from distributed import as_completed
    where = {f.key: i for i, f in enumerate(futures)}
    out: list = [None] * len(futures)
    for fut in as_completed(futures):
        out[where[fut.key]] = _check(fut.result())
        fut.release()
        if bar:
            bar.update()
    return out


# ------------------------------------------------------------------ results
@dataclass(frozen=True, eq=False)
class SweepPeaks:
    """Peaks of |H| for every variant and response point, as columns of one row per
    peak (``table["frequency"]`` is an array), and, given an excitation frequency,
    the closest natural frequency of every variant with its separation margin.

    Row columns: ``variant`` (index), one column per swept path (its value),
    ``response`` (index), ``response_at`` (m), ``frequency`` (Hz), ``level``
    (dB re 1 unit of the FRF). Per variant (arrays of n_values): ``natural_frequency``
    (Hz, the elastic natural frequency closest to ``excitation``) and ``margin`` (%),
    (f_n - f_exc) / f_exc * 100; NaN without an excitation.
    """

    columns: dict
    units: dict
    excitation: float | None
    natural_frequency: np.ndarray
    margin: np.ndarray

    def __getitem__(self, name: str) -> np.ndarray:
        try:
            return self.columns[name]
        except KeyError:
            raise ModelError("column", name, "",
                             f"unknown column (use {', '.join(self.columns)})") from None

    def __len__(self) -> int:
        return len(self.columns["frequency"])

    def keys(self):
        return self.columns.keys()

    def of(self, variant: int, response: int = 0) -> tuple[np.ndarray, np.ndarray]:
        """(frequency Hz, level dB) of the peaks of one variant at one response point."""
        sel = (self.columns["variant"] == variant) & (self.columns["response"] == response)
        return self.columns["frequency"][sel], self.columns["level"][sel]

    def highest(self, response: int = 0) -> np.ndarray:
        """Highest peak level (dB) of each variant at a response point; NaN where the
        band holds no peak."""
        n = len(self.natural_frequency)
        out = np.full(n, np.nan)
        sel = self.columns["response"] == response
        v = self.columns["variant"][sel]
        lv = self.columns["level"][sel]
        if v.size:
            np.fmax.at(out, v, lv)
        return out

    def to_csv(self, path=None) -> str:
        """The peak rows as CSV text with units in the header; written atomically to
        ``path`` if given."""
        names = list(self.columns)
        head = ",".join(f"{n} [{self.units[n]}]" if self.units.get(n) else n for n in names)
        lines = [head]
        for i in range(len(self)):
            lines.append(",".join(_fmt(self.columns[n][i]) for n in names))
        text = "\n".join(lines) + "\n"
        if path is not None:
            from ..model.io import write_text_atomic
            write_text_atomic(path, text)
        return text


def _fmt(v) -> str:
    if isinstance(v, (int, np.integer)):
        return str(int(v))
    return f"{float(v):.10g}"


@dataclass(frozen=True, eq=False)
class Sweep:
    """The FRF of every variant of a sweep.

    ``frf``: complex (n_values, n_freq, n_resp), e^{+i w t}, in ``unit``;
    ``values``: (n_values, n_paths), the swept values in ``units``; ``models``: the
    model dict of every variant (``line(i)`` builds it).
    """

    paths: tuple[str, ...]
    values: np.ndarray
    units: tuple[str, ...]
    frequencies: np.ndarray
    frf: np.ndarray
    response_at: np.ndarray
    drive_at: float
    drive: str
    quantity: str
    unit: str
    method: str
    kind: str
    mode: str
    models: tuple = field(repr=False)

    def __array__(self, dtype=None, copy=None):
        return self.frf if dtype is None else self.frf.astype(dtype)

    def __len__(self) -> int:
        return self.frf.shape[0]

    def line(self, i: int) -> Line:
        """The model of variant ``i``."""
        return Line.from_dict(self.models[i])

    def db(self, reference: float = 1.0) -> np.ndarray:
        """20 log10(|H| / reference), (n_values, n_freq, n_resp); zeros give -inf."""
        with np.errstate(divide="ignore"):
            return 20.0 * np.log10(np.abs(self.frf) / reference)

    def natural_frequencies(self, count: int = 8) -> np.ndarray:
        """The lowest ``count`` natural frequencies (Hz) of every variant,
        (n_values, count), from ``dl.natural_frequencies`` (computed once per distinct
        undamped model: a damping sweep computes them once)."""
        from ..solve import natural_frequencies
        from ..solve.modal import _skeleton
        cache: dict = {}
        out = np.empty((len(self), count))
        for i in range(len(self)):
            line = self.line(i)
            key = repr(_skeleton(line))
            if key not in cache:
                cache[key] = natural_frequencies(line, count)
            out[i] = cache[key]
        return out

    def peaks(self, *, min_prominence_db: float = 3.0, excitation: float | None = None
              ) -> SweepPeaks:
        """Peak table: each peak of |H| (frequency in Hz, level in dB re 1 ``unit``,
        parabolic refinement as :meth:`dampline.FRF.peaks`) for every variant and
        response point; with ``excitation`` (Hz) also the elastic natural frequency
        of each variant closest to it (``dl.natural_frequencies``; rigid-body modes
        at 0 Hz are not resonances to keep clear of) and the separation margin
        (f_n - f_exc) / f_exc * 100 in percent."""
        from ..results import FRF
        cols: dict[str, list] = {"variant": [], "response": [], "response_at": [],
                                 "frequency": [], "level": []}
        vals: list[list[float]] = [[] for _ in self.paths]
        for i in range(len(self)):
            H = FRF(frequencies=self.frequencies, values=self.frf[i], quantity=self.quantity,
                    unit=self.unit, drive=self.drive, drive_at=self.drive_at,
                    response_at=self.response_at, method=self.method, kind=self.kind)
            for r in range(self.frf.shape[2]):
                pk = H.peaks(r, min_prominence_db=min_prominence_db)
                m = len(pk)
                cols["variant"] += [i] * m
                cols["response"] += [r] * m
                cols["response_at"] += [float(self.response_at[r])] * m
                cols["frequency"] += list(pk.frequency)
                with np.errstate(divide="ignore"):
                    cols["level"] += list(20.0 * np.log10(pk.magnitude))
                for j in range(len(self.paths)):
                    vals[j] += [float(self.values[i, j])] * m
        columns: dict[str, np.ndarray] = {"variant": np.asarray(cols["variant"], dtype=int)}
        units: dict[str, str] = {}
        for j, p in enumerate(self.paths):
            columns[p] = np.asarray(vals[j], dtype=float)
            units[p] = self.units[j]
        columns["response"] = np.asarray(cols["response"], dtype=int)
        columns["response_at"] = np.asarray(cols["response_at"], dtype=float)
        columns["frequency"] = np.asarray(cols["frequency"], dtype=float)
        columns["level"] = np.asarray(cols["level"], dtype=float)
        units.update({"response_at": "m", "frequency": "Hz", "level": f"dB re 1 {self.unit}"})
        fn = np.full(len(self), np.nan)
        margin = np.full(len(self), np.nan)
        if excitation is not None:
            try:
                fe = float(excitation)
            except (TypeError, ValueError):
                raise ModelError("excitation", excitation, "Hz", "must be a frequency") from None
            if not math.isfinite(fe) or fe <= 0:
                raise ModelError("excitation", excitation, "Hz", "must be a positive frequency")
            fn = self._closest_natural(fe)
            margin = (fn - fe) / fe * 100.0
        return SweepPeaks(columns=columns, units=units, excitation=None if excitation is None
                          else float(excitation), natural_frequency=fn, margin=margin)

    def _closest_natural(self, fe: float) -> np.ndarray:
        """Elastic natural frequency of each variant closest to fe (Hz): enough modes are
        computed to pass fe (the count doubles until one lies above it)."""
        from ..solve import natural_frequencies
        from ..solve.modal import _skeleton
        cache: dict = {}
        out = np.empty(len(self))
        for i in range(len(self)):
            line = self.line(i)
            key = repr(_skeleton(line))
            if key not in cache:
                count = 8
                while True:
                    fn = natural_frequencies(line, count)
                    if fn[-1] > fe or count >= 4096:
                        break
                    count *= 2
                el = fn[fn > 0.0]
                cache[key] = float(el[np.argmin(np.abs(el - fe))]) if el.size else np.nan
            out[i] = cache[key]
        return out

    def to_csv(self, path) -> os.PathLike:
        """Write the sweep as CSV: one row per (variant, frequency); columns the swept
        values, the frequency and, per response point, real and imaginary part,
        magnitude and level of H, with units in the header. Atomic (a temporary file
        beside the target, then renamed)."""
        from ..model.io import write_text_atomic
        nv, nf, nr = self.frf.shape
        head = [f"{p} [{u}]" if u else p for p, u in zip(self.paths, self.units)]
        head.append("frequency [Hz]")
        u = self.unit
        cols = [np.repeat(self.values[:, j], nf) for j in range(len(self.paths))]
        cols.append(np.tile(self.frequencies, nv))
        for r in range(nr):
            x = f"{float(self.response_at[r]):.10g} m"
            v = self.frf[:, :, r].ravel()
            head += [f"real H at {x} [{u}]", f"imag H at {x} [{u}]",
                     f"magnitude H at {x} [{u}]", f"level H at {x} [dB re 1 {u}]"]
            with np.errstate(divide="ignore"):
                cols += [v.real, v.imag, np.abs(v), 20.0 * np.log10(np.abs(v))]
        meta = (f"# dampline sweep: {self.kind} line; {self.quantity} per unit {self.drive} at "
                f"{self.drive_at:.10g} m; method {self.method}; mode {self.mode}; "
                f"{nv} variants x {nf} frequencies")
        rows = np.column_stack(cols)
        fmt = ",".join(["%.10g"] * rows.shape[1])
        body = "\n".join(fmt % tuple(r) for r in rows.tolist())
        return write_text_atomic(path, meta + "\n" + ",".join(head) + "\n" + body + "\n")

    def __repr__(self) -> str:
        return (f"Sweep({', '.join(self.paths)}: {len(self)} variants ({self.mode}), "
                f"{self.frf.shape[1]} frequencies {self.frequencies[0]:g}-"
                f"{self.frequencies[-1]:g} Hz, {self.frf.shape[2]} response points, "
                f"{self.quantity} [{self.unit}], method={self.method!r})")
