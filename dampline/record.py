"""Design records: an executed notebook and one HTML page that shows it with no kernel
and no network.

``record_notebook(path)`` runs a notebook top to bottom in a fresh ``python3`` kernel
(nbclient, working directory = the notebook's folder), keeps the final widget state in
the notebook's metadata, and writes

* the executed notebook (``<name>.executed.ipynb`` beside the source unless told
  otherwise), with a header cell and ``metadata["dampline"]["record"]``;
* optionally an HTML page that carries everything it needs inline: the page, the widget
  state, require.js, the ipywidgets HTML manager and the front-end modules of the widget
  libraries the state uses (bqplot, bqscales). Its figures draw, pan, zoom and show
  tooltips in any browser, offline; controls that would ask the kernel to recompute do
  nothing there.

Header (top of the page, first cell of the notebook, and as data in both):

* **model hashes** -- after the last cell, the kernel is asked for every
  :class:`dampline.Line` in the notebook's global namespace (also inside lists, tuples
  and dicts there, and the ``.line`` of dampline objects such as a dashboard). Each is
  identified by ``sha256(dl.dumps(line))``: the SHA-256 of its canonical TOML text, see
  :func:`model_hash`. This names the models the notebook ended with, however they were
  built (``dl.load``, ``Line.from_dict``, edits); the same model always gives the same
  hash, whatever the formatting of its TOML file.
* versions of dampline, numpy, scipy, ipywidgets and bqplot and of Python, as the kernel
  that ran the notebook saw them, and the date and time (UTC) of the record.

The npm scripts are pinned in :mod:`dampline.assets` and fetched into a per-user cache
(``python -m dampline assets``); a record fetches them itself when the cache is empty.
"""

from __future__ import annotations

import ast
import base64
import copy
import datetime as _dt
import hashlib
import html as _html
import json
import os
import platform
import re
import sys
import warnings
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .assets import AssetError, NPM_ASSETS, asset_path, fetch_assets, missing_assets
from .model import Line, dumps
from .model.io import write_text_atomic

__all__ = ["RecordResult", "RecordError", "AssetError", "record_notebook", "record_model",
           "model_hash", "fetch_assets"]

#: tag of the header cell a record puts first in the executed notebook (replaced, never
#: stacked, when an executed notebook is recorded again)
HEADER_TAG = "dampline-record-header"
#: widget modules the HTML manager itself provides
_BUILTIN_MODULES = {"@jupyter-widgets/base", "@jupyter-widgets/controls", "@jupyter-widgets/output"}
#: where a module the page does not carry would be looked for: a relative path, so a
#: missing module fails on the page's own origin instead of reaching for a CDN
_NO_CDN = "./dampline-record-missing-widget-modules/"
_ANSI = re.compile(r"\x1b\[[0-9;]*[A-Za-z]")


@dataclass(frozen=True)
class RecordResult:
    """What a record wrote."""

    notebook: Path                 #: the executed notebook
    html: Path | None = None       #: the self-contained HTML page, if one was asked for
    header: dict = field(default_factory=dict, compare=False, repr=False)  #: header data
    warnings: tuple[str, ...] = ()  #: e.g. a widget module the page could not carry


class RecordError(RuntimeError):
    """The notebook could not be executed (a cell raised, timed out, the kernel died)."""


def model_hash(line: Line) -> str:
    """SHA-256 (hex) of the line's canonical TOML text ``dl.dumps(line)`` (UTF-8).

    Two models hash alike exactly when they save to the same TOML, so a record's hash can
    be checked against a model file with ``model_hash(dl.load(path))``.
    """
    if not isinstance(line, Line):
        raise TypeError(f"model_hash needs a dampline.Line, got {type(line).__name__}")
    return hashlib.sha256(dumps(line).encode("utf-8")).hexdigest()


# ---------------------------------------------------------------------------------------
# kernel-side report (runs inside the kernel that executed the notebook)

_REPORTED_DISTS = ("dampline", "numpy", "scipy", "ipywidgets", "bqplot")


def _versions() -> dict[str, str | None]:
    """Versions of the reported packages in this interpreter, without importing them
    (an already imported module's ``__version__`` wins: it is the code that ran)."""
    from importlib import metadata

    out: dict[str, str | None] = {}
    for name in _REPORTED_DISTS:
        mod = sys.modules.get(name)
        ver = getattr(mod, "__version__", None) if mod is not None else None
        if ver is None:
            try:
                ver = metadata.version(name)
            except metadata.PackageNotFoundError:
                ver = None
        out[name] = ver
    out["python"] = platform.python_version()
    return out


def _models_in(namespace: dict) -> list[dict]:
    """The dampline lines reachable from a notebook's global names (see the module doc)."""
    found: dict[str, dict] = {}

    def add(label: str, line: Line) -> None:
        h = model_hash(line)
        entry = found.setdefault(h, {"sha256": h, "title": line.title, "kind": line.kind,
                                     "names": []})
        entry["names"].append(label)

    def visit(label: str, obj: Any, depth: int) -> None:
        if isinstance(obj, Line):
            add(label, obj)
            return
        if depth > 1:
            return
        if type(obj).__module__.split(".")[0] == "dampline":
            # only our own objects: reading an attribute of an arbitrary object may run code
            inner = getattr(obj, "line", None)
            if isinstance(inner, Line):
                add(f"{label}.line", inner)
        elif isinstance(obj, (list, tuple)):
            for i, x in enumerate(obj[:256]):
                visit(f"{label}[{i}]", x, depth + 1)
        elif isinstance(obj, dict):
            for k, x in list(obj.items())[:256]:
                visit(f"{label}[{k!r}]", x, depth + 1)

    for name, obj in list(namespace.items()):
        # skip IPython's history (_, __, _i1, In, Out): it repeats what the names hold
        if name.startswith("_") or name in ("In", "Out"):
            continue
        visit(name, obj, 0)
    return sorted(found.values(), key=lambda e: e["names"][0])


def _kernel_report(namespace: dict) -> str:
    """JSON of the versions and models of the calling kernel (used by the record)."""
    return json.dumps({"versions": _versions(), "models": _models_in(namespace)})


# evaluated in the kernel as a silent user expression after the last cell
_PROBE = '__import__("dampline.record", fromlist=["_kernel_report"])._kernel_report(globals())'


# ---------------------------------------------------------------------------------------
# execution


def _strip_ansi(text: str) -> str:
    return _ANSI.sub("", text)


def _execute(nb, folder: Path, timeout: float, kernel_name: str, source: Path) -> dict:
    """Run every cell of ``nb`` (in place) in a fresh kernel; return the kernel report."""
    from nbclient import NotebookClient
    from nbclient.exceptions import CellExecutionError, CellTimeoutError, DeadKernelError
    from nbclient.util import run_sync

    client = NotebookClient(nb, timeout=timeout, kernel_name=kernel_name,
                            resources={"metadata": {"path": str(folder)}},
                            store_widget_state=True)
    state = {"index": None}

    async def run() -> dict:
        async with client.async_setup_kernel():
            assert client.kc is not None
            info = await client.async_wait_for_reply(client.kc.kernel_info())
            if info is not None and "language_info" in info["content"]:
                nb.metadata["language_info"] = info["content"]["language_info"]
            for index, cell in enumerate(nb.cells):
                state["index"] = index
                await client.async_execute_cell(
                    cell, index, execution_count=client.code_cells_executed + 1)
            state["index"] = None
            msg_id = client.kc.execute("", silent=True, store_history=False,
                                       user_expressions={"report": _PROBE})
            reply = await client.async_wait_for_reply(msg_id)
            client.set_widgets_metadata()
        return _parse_report(reply)

    try:
        return run_sync(run)()
    except (CellExecutionError, CellTimeoutError, DeadKernelError) as exc:
        where = f"cell {state['index']}" if state["index"] is not None else "the kernel"
        raise RecordError(f"{source}: {where} failed; nothing was written.\n"
                          f"{_strip_ansi(str(exc)).strip()}") from exc
    except Exception as exc:
        if type(exc).__name__ == "NoSuchKernel":
            raise RecordError(f"{source}: no Jupyter kernel named {kernel_name!r} "
                              "(pip install ipykernel)") from exc
        raise


def _parse_report(reply: dict | None) -> dict:
    """Kernel report from the probe's reply; the recording interpreter's versions and no
    models when the kernel could not answer (e.g. dampline not importable there)."""
    try:
        res = reply["content"]["user_expressions"]["report"]
        if res.get("status") == "ok":
            return json.loads(ast.literal_eval(res["data"]["text/plain"]))
        detail = f"{res.get('ename')}: {res.get('evalue')}"
    except (KeyError, TypeError, ValueError, SyntaxError) as exc:
        detail = repr(exc)
    warnings.warn(f"the kernel did not report its models and versions ({detail}); the "
                  "header shows this interpreter's versions and no model hash", stacklevel=3)
    return {"versions": _versions(), "models": [], "probe_error": detail}


# ---------------------------------------------------------------------------------------
# header


def _header(source: Path, report: dict) -> dict:
    now = _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0)
    return {
        "source": source.name,
        "recorded_utc": now.strftime("%Y-%m-%dT%H:%M:%SZ"),
        "models": report.get("models", []),
        "versions": report.get("versions", {}),
        "hash_rule": "sha256 of the UTF-8 canonical TOML text dl.dumps(line)",
    }


_VERSION_ORDER = ("dampline", "numpy", "scipy", "ipywidgets", "bqplot", "python")
_VERSION_LABEL = {"python": "Python"}


def _header_markdown(h: dict) -> str:
    rows = [f"**Design record** of `{h['source']}`, recorded {h['recorded_utc']} (UTC) "
            "by `python -m dampline record`.", "", "| | |", "|---|---|"]
    for m in h["models"] or [{"names": ["(none found)"], "title": "", "kind": "", "sha256": "-"}]:
        what = ", ".join(f"`{n}`" for n in m["names"])
        desc = f" -- {m['title']} ({m['kind']})" if m.get("kind") else ""
        rows.append(f"| model {what}{desc} | sha256 `{m['sha256']}` |")
    for k in _VERSION_ORDER:
        rows.append(f"| {_VERSION_LABEL.get(k, k)} | {h['versions'].get(k) or 'not installed'} |")
    rows += ["", f"Model hash: {h['hash_rule']}."]
    return "\n".join(rows)


def _header_html(h: dict) -> str:
    e = _html.escape
    models = h["models"]
    mrows = "".join(
        f'<tr class="dl-model"><th>model {e(", ".join(m["names"]))}</th>'
        f'<td>{e(m["title"] or "")} ({e(m["kind"])})<br><code class="dl-hash">{e(m["sha256"])}</code></td></tr>'
        for m in models) or '<tr><th>model</th><td>no dampline model in the notebook</td></tr>'
    vrows = "".join(
        f'<tr class="dl-version" data-name="{e(k)}"><th>{e(_VERSION_LABEL.get(k, k))}</th>'
        f'<td>{e(str(h["versions"].get(k) or "not installed"))}</td></tr>'
        for k in _VERSION_ORDER)
    info = json.dumps(h, sort_keys=True).replace("</", "<\\/")
    return f"""
<section id="dampline-record-header" class="dampline-record-header">
<style>
.dampline-record-header {{ font-family: var(--jp-ui-font-family, sans-serif); font-size: 13px;
  margin: 12px 20px 4px; padding: 8px 12px; border: 1px solid #c8c8c8; border-radius: 4px;
  background: #f7f7f4; }}
.dampline-record-header table {{ border-collapse: collapse; }}
.dampline-record-header th {{ text-align: left; padding: 2px 14px 2px 0; font-weight: 600;
  vertical-align: top; }}
.dampline-record-header td {{ padding: 2px 0; }}
.dampline-record-header code {{ font-size: 12px; }}
</style>
<div><b>Design record</b> of <code>{e(h["source"])}</code>, recorded
<time class="dl-date" datetime="{e(h["recorded_utc"])}">{e(h["recorded_utc"])}</time> (UTC).
Figures are the state the notebook ended with: they pan, zoom and show values here;
controls that need the Python kernel to recompute do nothing on this page.</div>
<table>{mrows}{vrows}</table>
<div>Model hash: {e(h["hash_rule"])}.</div>
<script type="application/json" id="dampline-record-info">{info}</script>
</section>
"""


# ---------------------------------------------------------------------------------------
# HTML page

_TEMPLATE = r"""{%- extends 'index.html.j2' -%}
{%- block html_head_js_requirejs -%}
{{ resources.dampline_head_scripts }}
{%- endblock html_head_js_requirejs -%}
{% block jupyter_widgets %}
{%- if "widgets" in nb.metadata -%}
{{ resources.dampline_widget_scripts }}
{%- endif -%}
{% endblock jupyter_widgets %}
{%- block html_head_js_mathjax -%}
{%- endblock html_head_js_mathjax -%}
{%- block html_head_js_mermaidjs -%}
{%- endblock html_head_js_mermaidjs -%}
{%- block body_header -%}
{{ super() }}
{{ resources.dampline_header }}
{%- if "widgets" in nb.metadata -%}
{{ resources.dampline_fonts }}
{%- endif -%}
{%- endblock body_header -%}
"""


def _script(js: str, **attrs: str) -> str:
    """An inline <script>; the two sequences that would end or confuse an HTML script
    element are escaped (JavaScript reads ``<\\/`` and ``<\\!`` as ``</`` and ``<!``)."""
    js = re.sub(r"</(script)", r"<\\/\1", js, flags=re.IGNORECASE).replace("<!--", "<\\!--")
    # source-map comments point at files the page does not carry
    js = re.sub(r"^//# sourceMappingURL=.*$", "", js, flags=re.MULTILINE)
    extra = "".join(f' {k.replace("_", "-")}="{_html.escape(v)}"' for k, v in attrs.items())
    return f"<script{extra}>\n{js}\n</script>"


_ANON_DEFINE = re.compile(r"\A(\s*(?:/\*.*?\*/\s*)*)define\(\s*(?=[\[f])", re.DOTALL)


def _named_amd(js: str, name: str) -> str | None:
    """Give an anonymous AMD module (``define([deps], f)``, as the nbextension builds of
    widget libraries are) its module name, so it can sit inline in the page."""
    m = _ANON_DEFINE.match(js)
    if m is None:
        return None
    return js[:m.end(1)] + f"define({json.dumps(name)}," + js[m.end():]


def _nbextension_dirs() -> list[Path]:
    dirs = [Path(sys.prefix) / "share" / "jupyter" / "nbextensions"]
    try:
        from jupyter_core.paths import jupyter_path
        dirs += [Path(p) for p in jupyter_path("nbextensions")]
    except ImportError:
        pass
    seen, out = set(), []
    for d in dirs:
        if d not in seen:
            seen.add(d)
            out.append(d)
    return out


def _widget_modules(nb) -> list[str]:
    state = nb.metadata.get("widgets", {}).get("application/vnd.jupyter.widget-state+json", {})
    mods = set()
    for s in state.get("state", {}).values():
        for key in ("model_module", "view_module"):
            mod = s.get(key) or s.get("state", {}).get(f"_{key}")
            if mod:
                mods.add(mod)
    return sorted(mods - _BUILTIN_MODULES)


def _read_asset(role: str) -> str:
    path = asset_path(role)
    try:
        return path.read_text(encoding="utf-8")
    except OSError as exc:
        raise AssetError(f"cannot read {path} ({exc}); run `python -m dampline assets`") from exc


def _icon_fonts() -> str:
    """@font-face rules with the icon fonts as data URIs. They sit in the body, after the
    rules the HTML manager adds to the head, and so win (the last matching @font-face
    does): the manager's own rules point at font files beside the page that it lacks."""
    rules = []
    for role, weight in (("font-solid-900", 900), ("font-regular-400", 400)):
        data = base64.b64encode(asset_path(role).read_bytes()).decode("ascii")
        rules.append('@font-face { font-family: "Font Awesome 5 Free"; font-style: normal; '
                     f"font-weight: {weight}; font-display: block; "
                     f'src: url(data:font/woff2;base64,{data}) format("woff2"); }}')
    return '<style data-dampline="icon-fonts">\n' + "\n".join(rules) + "\n</style>"


def _ensure_assets() -> None:
    if missing_assets():
        try:
            fetch_assets()
        except AssetError as exc:
            raise AssetError(f"the HTML page needs browser scripts that are not cached: "
                             f"{exc}") from exc


def _widget_scripts(nb) -> tuple[str, list[str]]:
    """Inline scripts for the widget modules the state uses, then the HTML manager."""
    problems, parts = [], []
    modules = _widget_modules(nb)
    # bqplot's marks use bqscales' scales: carry both whenever either appears
    if "bqplot" in modules and "bqscales" not in modules:
        modules.append("bqscales")
    for mod in modules:
        src = next((d / mod / "index.js" for d in _nbextension_dirs()
                    if (d / mod / "index.js").is_file()), None)
        if src is None:
            problems.append(f"widget module {mod!r}: no nbextensions/{mod}/index.js found in "
                            f"{', '.join(map(str, _nbextension_dirs()))}; its views will not "
                            "show on the page")
            continue
        named = _named_amd(src.read_text(encoding="utf-8"), mod)
        if named is None:
            problems.append(f"widget module {mod!r}: {src} is not an anonymous AMD module; "
                            "its views will not show on the page")
            continue
        parts.append(_script(named, data_dampline_module=mod))
    a = NPM_ASSETS["html-manager"]
    # the manager's default CDN (used only for a module the page lacks) becomes a local
    # path too, so the page holds no CDN address at all
    manager = _read_asset("html-manager").replace('"https://cdn.jsdelivr.net/npm/"',
                                                  json.dumps(_NO_CDN))
    parts.append(_script(manager,
                         data_dampline_module=f"{a.package}@{a.version}",
                         data_jupyter_widgets_cdn=_NO_CDN))
    return "\n".join(parts), problems


def _render_html(nb, header: dict) -> tuple[str, list[str]]:
    from jinja2 import DictLoader
    from nbconvert import HTMLExporter

    page_nb = copy.deepcopy(nb)
    # the page shows the header as its own block, not as the first cell
    page_nb.cells = [c for c in page_nb.cells if HEADER_TAG not in c.metadata.get("tags", [])]
    if header["models"]:
        page_nb.metadata["title"] = page_nb.metadata.get("title") or (
            header["models"][0]["title"] or Path(header["source"]).stem)
    r = NPM_ASSETS["requirejs"]
    head = _script(_read_asset("requirejs"), data_dampline_module=f"{r.package}@{r.version}")
    widgets, problems = _widget_scripts(page_nb) if "widgets" in page_nb.metadata else ("", [])
    exporter = HTMLExporter(template_name="lab", template_file="dampline_record.html.j2",
                            extra_loaders=[DictLoader({"dampline_record.html.j2": _TEMPLATE})])
    body, _ = exporter.from_notebook_node(page_nb, resources={
        "dampline_head_scripts": head,
        "dampline_widget_scripts": widgets,
        "dampline_header": _header_html(header),
        "dampline_fonts": _icon_fonts() if widgets else "",
    })
    return body, problems


# ---------------------------------------------------------------------------------------
# public entry points


def record_notebook(path: str | os.PathLike, html: str | os.PathLike | None = None,
                    output: str | os.PathLike | None = None, timeout: float = 600, *,
                    inplace: bool = False, kernel_name: str = "python3") -> RecordResult:
    """Execute a notebook and write its design record.

    Parameters
    ----------
    path : the notebook (``.ipynb``). It runs in a fresh ``kernel_name`` kernel whose
        working directory is the notebook's folder, so relative model paths work.
    html : where to write the self-contained HTML page (none when omitted).
    output : where to write the executed notebook; default ``<name>.executed.ipynb``
        beside the source.
    timeout : seconds each cell may run (nbclient's per-cell timeout).
    inplace : overwrite the source notebook with the executed one (not with ``output``).

    Nothing is written unless every cell ran: both files are written atomically (a
    temporary file beside the target, then a rename), the executed notebook first.

    Raises
    ------
    FileNotFoundError : the notebook does not exist (the message names the path).
    RecordError : a cell raised or timed out, or the kernel died or is not installed.
    AssetError : an HTML page was asked for and the npm scripts are neither in the cache
        nor fetchable (the message names the cache folder and ``python -m dampline assets``).
    """
    import nbformat

    src = Path(path)
    if not src.is_file():
        raise FileNotFoundError(f"notebook not found: {src}")
    if inplace and output is not None:
        raise ValueError("give either output or inplace=True, not both")
    if not (timeout > 0):
        raise ValueError(f"timeout must be a positive number of seconds, got {timeout!r}")
    out = src if inplace else Path(output) if output is not None else src.with_name(
        src.name[:-len(".ipynb")] + ".executed.ipynb" if src.name.endswith(".ipynb")
        else src.name + ".executed.ipynb")
    if html is not None and Path(html).resolve() in (src.resolve(), out.resolve()):
        raise ValueError(f"the HTML page {html} would overwrite a notebook")

    if html is not None:
        _ensure_assets()   # fail before the kernel runs, not after
    nb = nbformat.read(src, as_version=4)
    nb.cells = [c for c in nb.cells if HEADER_TAG not in c.metadata.get("tags", [])]
    nb.metadata.pop("widgets", None)   # a re-record must not keep the last run's widgets
    report = _execute(nb, src.resolve().parent, timeout, kernel_name, src)

    header = _header(src, report)
    nb.metadata.setdefault("dampline", {})["record"] = header
    cell = nbformat.v4.new_markdown_cell(_header_markdown(header))
    cell.metadata["tags"] = [HEADER_TAG]
    nb.cells.insert(0, cell)
    text = nbformat.writes(nb)

    page, problems = _render_html(nb, header) if html is not None else (None, [])
    for p in problems:
        warnings.warn(p, stacklevel=2)
    if out.parent != Path(""):
        out.parent.mkdir(parents=True, exist_ok=True)
    write_text_atomic(out, text)
    html_path = None
    if page is not None:
        html_path = Path(html)
        html_path.parent.mkdir(parents=True, exist_ok=True)
        write_text_atomic(html_path, page)
    return RecordResult(notebook=out, html=html_path, header=header, warnings=tuple(problems))


def _slug(text: str) -> str:
    s = re.sub(r"[^a-z0-9]+", "-", text.lower()).strip("-")
    return s[:60].rstrip("-") or "model"


def record_model(line: Line, folder: str | os.PathLike, title: str | None = None, *,
                 name: str | None = None, timeout: float = 600) -> RecordResult:
    """Write a small notebook for ``line`` into ``folder`` and record it.

    Files (``<name>`` defaults to a slug of the title; existing files are replaced):
    ``<name>.toml`` (the model, ``dl.save``), ``<name>.ipynb`` (a header with the title
    and a place for the design question, a cell that loads the model and shows
    ``dl.Dashboard(line)``, a cell that prints ``dl.modal_table(line, 8)``; executed in
    place) and ``<name>.html`` (the self-contained page).

    ``title`` defaults to the model's own title, else its kind.
    """
    import nbformat

    if not isinstance(line, Line):
        raise TypeError(f"record_model needs a dampline.Line, got {type(line).__name__}")
    title = title or line.title or f"{line.kind} line"
    name = name or _slug(title)
    if not re.fullmatch(r"[A-Za-z0-9][A-Za-z0-9._-]*", name):
        raise ValueError(f"name {name!r}: use letters, digits, '.', '_' and '-' only")
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    toml_path = folder / f"{name}.toml"
    nb_path = folder / f"{name}.ipynb"
    write_text_atomic(toml_path, dumps(line))

    segs = len(line.segments)
    intro = (f"# {title}\n\n"
             "**The design question.** _Write here what this record is meant to decide: "
             "which resonances fall in the operating band, which damping mechanism limits "
             "each peak, and what change would fix it._\n\n"
             f"Model: `{toml_path.name}` (saved beside this notebook), a {line.kind} line of "
             f"{segs} segment{'s' if segs != 1 else ''}, {line.length:g} m long, damping model "
             f"`{line.damping.model}`. Its hash in the record header is the SHA-256 of "
             "`dl.dumps(line)`.")
    load = (f"import dampline as dl\n\n"
            f"line = dl.load({toml_path.name!r})   # path relative to this notebook\n"
            f"d = dl.Dashboard(line)\n"
            f"d")
    table = "print(dl.modal_table(line, 8))   # first 8 modes: frequency (Hz), damping, Q"
    nb = nbformat.v4.new_notebook()
    nb.cells = [nbformat.v4.new_markdown_cell(intro), nbformat.v4.new_code_cell(load),
                nbformat.v4.new_code_cell(table)]
    nb.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3 (ipykernel)",
                                 "language": "python"}
    nb.metadata["title"] = title
    write_text_atomic(nb_path, nbformat.writes(nb))
    return record_notebook(nb_path, html=folder / f"{name}.html", inplace=True, timeout=timeout)
