"""The benchmark suite: every case in its own process, one summary table.

``python -m benchmarks`` runs every case; ``--quick`` takes fewer repeats,
``--skip-mpmath`` leaves out the minute-long mpmath check of the 200 beam modes,
``--only NAME[,NAME]`` runs some cases (names below), ``--json OUT`` writes the
results, ``--readme`` writes the table into README.md between the markers
``<!-- benchmarks:start -->`` and ``<!-- benchmarks:end -->`` (rows of cases not
run this time are kept), ``--from-json IN`` takes the results of an earlier run
instead of measuring.

Each case runs in a child process (``python -m benchmarks --child NAME``), which
times dampline and its baseline in the same run (medians of repeats) and prints its
details. The parent reads the child's peak resident set size from ``os.wait4`` -- the
largest of the child and the processes it waited for: interpreter, libraries,
baseline and dampline together -- and prints the table. ``dl alloc`` is the peak that
tracemalloc (which numpy reports its buffers to) sees during one dampline call.
Thread variables (OPENBLAS_NUM_THREADS...) are passed on untouched.
"""

from __future__ import annotations

import argparse
import datetime
import importlib
import importlib.util
import inspect
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from ._common import row

ROOT = Path(__file__).resolve().parent.parent
README = ROOT / "README.md"
START, END = "<!-- benchmarks:start -->", "<!-- benchmarks:end -->"

#: case name -> module in this package; run in this order
CASES = {
    "exact_axial": "bench_exact_frf",
    "exact_beam": "bench_exact_beam",
    "beam_modes": "bench_beam_modes",
    "modal": "bench_modal",
    "damping_change": "bench_damping_change",
    "dashboard": "bench_dashboard",
    "sweep": "bench_sweep",
    "import": "bench_import",
    "memory": "bench_memory",
}


def available(name: str) -> bool:
    """A case whose module exists (the sweep benchmark is optional)."""
    return importlib.util.find_spec(f"benchmarks.{CASES[name]}") is not None


# ------------------------------------------------------------------ child side
def _sweep_rows(mod, quick: bool) -> list[dict]:
    """Rows from bench_sweep.main()'s result: each sweep against the loop of dl.frf, and
    the 2-worker dask run against one process."""
    kw = {"quick": quick} if "quick" in inspect.signature(mod.main).parameters else {}
    res = mod.main(**kw) or {}
    shape = f"{getattr(mod, 'N_VAR', '?')} variants x {getattr(mod, 'N_FREQ', '?')} f"
    out = []
    for name, r in res.items():
        if name == "dask":
            if not r:
                out.append(row("sweep dask", "2-worker LocalCluster", float("nan"),
                               notes="dask.distributed not installed: skipped"))
                continue
            out.append(row("sweep dask 2 workers", f"dl.sweep on a 2-worker cluster, {shape}",
                           r["t_dask"], t_baseline=r["t_local"], baseline="one local process",
                           ratio=r["speedup"], ratio_is="baseline / dampline", target=">= 1.7x",
                           met=r["speedup"] >= 1.7 and r.get("identical", True),
                           notes=f"results {'identical' if r.get('identical') else 'DIFFER'}"))
        elif isinstance(r, dict) and "t_sweep" in r:
            out.append(row(f"sweep {name}", f"dl.sweep of {name}, {shape}", r["t_sweep"],
                           t_baseline=r.get("t_loop"), baseline="Python loop of dl.frf",
                           ratio=r.get("ratio"), ratio_is="baseline / dampline",
                           notes=(f"{r.get('rate', float('nan')):.0f} variants/s; max relative "
                                  f"difference {r.get('err', float('nan')):.0e}")))
    return out


def run_child(name: str, quick: bool, skip_mpmath: bool, out: str) -> None:
    mod = importlib.import_module(f"benchmarks.{CASES[name]}")
    if hasattr(mod, "rows"):
        rows = mod.rows(quick=quick, skip_mpmath=skip_mpmath)
    elif name == "sweep":
        rows = _sweep_rows(mod, quick)
    else:
        raise RuntimeError(f"benchmarks.{CASES[name]} has no rows()")
    Path(out).write_text(json.dumps(rows, default=float))


# ------------------------------------------------------------------ parent side
def run_case(name: str, quick: bool, skip_mpmath: bool) -> tuple[list[dict], float]:
    """Run one case in a child process: (its rows with peak RSS, wall seconds)."""
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "rows.json"
        cmd = [sys.executable, "-m", "benchmarks", "--child", name, "--json", str(out)]
        cmd += ["--quick"] * quick + ["--skip-mpmath"] * skip_mpmath
        t0 = time.perf_counter()
        proc = subprocess.Popen(cmd, cwd=ROOT)
        _pid, status, usage = os.wait4(proc.pid, 0)
        proc.returncode = os.waitstatus_to_exitcode(status)
        wall = time.perf_counter() - t0
        rss = usage.ru_maxrss / 1024                     # KiB on Linux -> MiB
        if proc.returncode != 0 or not out.exists():
            return [row(name, "", float("nan"), met=False, rss_mib=rss,
                        notes=f"FAILED (exit code {proc.returncode}); see its output")], wall
        rows = json.loads(out.read_text())
    for r in rows:
        r.setdefault("rss_mib", None)
        if r["rss_mib"] is None:
            r["rss_mib"] = rss
    return rows, wall


def machine_info() -> dict:
    """Machine report, library versions and the peak RSS (MiB) of a fresh interpreter
    that imports dampline -- from a child, so that this process never loads numpy."""
    code = ("import json, resource, dampline\n"
            "from benchmarks._common import machine_report, versions\n"
            "rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024\n"
            "print(json.dumps([machine_report(), versions(), rss]))")
    out = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True,
                         text=True, check=True)
    report, v, rss = json.loads(out.stdout.strip().splitlines()[-1])
    return {"report": report, "versions": v, "idle_rss_mib": rss}


# ------------------------------------------------------------------ table
def fmt_time(t) -> str:
    if t is None or t != t:
        return "-"
    if t < 1e-3:
        return f"{t * 1e6:.0f} us"
    if t < 1.0:
        return f"{t * 1e3:.3g} ms"
    return f"{t:.3g} s"


def fmt_ratio(r: dict) -> str:
    if r.get("ratio") is None:
        return "-"
    if r["ratio_is"] != "baseline / dampline":
        return f"{r['ratio']:.3g}x of baseline"
    if r["ratio"] < 1:
        return f"{1 / r['ratio']:.3g}x slower"
    return f"{r['ratio']:.3g}x faster"


def fmt_met(m) -> str:
    return "-" if m is None else ("yes" if m else "NO")


def fmt_mib(m) -> str:
    return "-" if m is None else f"{m:.0f} MiB"


COLUMNS = ("case", "dampline", "baseline", "ratio", "target", "met", "peak RSS", "dl alloc")


def cells(r: dict) -> list[str]:
    return [r["case"], fmt_time(r["t_dampline"]), fmt_time(r.get("t_baseline")), fmt_ratio(r),
            r.get("target") or "-", fmt_met(r.get("met")), fmt_mib(r.get("rss_mib")),
            fmt_mib(r.get("alloc_mib"))]


def details(r: dict) -> str:
    """What the case does, its baseline and its notes (accuracy, parts), in one line."""
    parts = [r.get("what", ""), f"baseline: {r['baseline']}" if r.get("baseline") else "",
             r.get("notes", "")]
    return "; ".join(p for p in parts if p)


def text_table(rows: list[dict]) -> str:
    data = [list(COLUMNS)] + [cells(r) for r in rows]
    widths = [max(len(c[i]) for c in data) for i in range(len(COLUMNS))]
    lines = ["  ".join(c.ljust(w) for c, w in zip(line, widths)).rstrip() for line in data]
    lines.insert(1, "  ".join("-" * w for w in widths))
    notes = [f"  {r['case']}: {details(r)}" for r in rows]
    return "\n".join(lines + ["", "details:"] + notes)


def markdown_rows(rows: list[dict]) -> list[str]:
    out = []
    for r in rows:
        c = cells(r) + [details(r).replace("|", "/")]
        out.append("| " + " | ".join(c) + " |")
    return out


def _rank(line: str) -> int:
    """Position of a markdown table row's case in CASES (unknown ones last)."""
    first = line[2:].split(" |")[0].split()[0]
    return next((i for i, k in enumerate(CASES) if first.startswith(k)), len(CASES))


def readme_block(result: dict, kept: list[str]) -> str:
    info = result["info"]
    head = "| " + " | ".join(COLUMNS + ("details",)) + " |"
    sep = "|" + "|".join("---" for _ in range(len(COLUMNS) + 1)) + "|"
    table = sorted(markdown_rows(result["rows"]) + kept, key=_rank)
    lines = [START, "",
             f"Measured {info['date']} with `{info['command']}` on {info['machine']}; "
             f"{info['versions']}. A fresh interpreter with dampline imported holds "
             f"{info['idle_rss_mib']:.0f} MiB. {info.get('remark', '')}".rstrip(), "",
             head, sep] + table
    if kept:
        lines += ["", "Rows of cases not run that time are kept from an earlier run."]
    return "\n".join(lines + ["", END])


def write_readme(result: dict, path: Path = README) -> None:
    """Replace the table between the markers; rows of cases not in ``result`` stay."""
    text = path.read_text()
    if START not in text or END not in text:
        raise SystemExit(f"{path.name} has no {START} ... {END} markers")
    a, b = text.index(START), text.index(END) + len(END)
    ran = {r["case"].split()[0] for r in result["rows"]}
    kept = [line for line in text[a:b].splitlines()
            if line.startswith("| ") and not line.startswith("| case ")
            and line[2:].split(" |")[0].split()[0] not in ran]
    path.write_text(text[:a] + readme_block(result, kept) + text[b:])


# ------------------------------------------------------------------ command
def parse(argv=None) -> argparse.Namespace:
    ap = argparse.ArgumentParser(prog="python -m benchmarks",
                                 description="dampline against hand-written baselines, "
                                             "each case timed with its baseline in one run")
    ap.add_argument("--quick", action="store_true", help="fewer repeats")
    ap.add_argument("--skip-mpmath", action="store_true",
                    help="leave out the mpmath check of the 200 beam modes (~70 s)")
    ap.add_argument("--only", default=None,
                    help=f"comma-separated case names: {', '.join(CASES)}")
    ap.add_argument("--json", default=None, metavar="OUT", help="write the results here")
    ap.add_argument("--readme", action="store_true",
                    help="write the table into README.md between the benchmark markers")
    ap.add_argument("--from-json", default=None, metavar="IN",
                    help="use the results of an earlier --json run instead of measuring")
    ap.add_argument("--remark", default="", help="a sentence added above the README table")
    ap.add_argument("--child", default=None, help=argparse.SUPPRESS)
    return ap.parse_args(argv)


def main(argv=None) -> int:
    a = parse(argv)
    if a.child:
        run_child(a.child, a.quick, a.skip_mpmath, a.json)
        return 0
    if a.from_json:
        result = json.loads(Path(a.from_json).read_text())
        if a.remark:
            result["info"]["remark"] = a.remark
    else:
        names = list(CASES) if a.only is None else [n.strip() for n in a.only.split(",")]
        unknown = [n for n in names if n not in CASES]
        if unknown:
            raise SystemExit(f"unknown case(s) {unknown}; choose from {', '.join(CASES)}")
        flags = " ".join(f for f, on in (("--quick", a.quick), ("--skip-mpmath", a.skip_mpmath),
                                          (f"--only {a.only}", a.only)) if on)
        m = machine_info()
        info = {"date": datetime.date.today().isoformat(),
                "command": f"python -m benchmarks {flags}".strip(),
                "machine": m["report"].splitlines()[0].removeprefix("machine: "),
                "versions": ", ".join(f"{k} {val}" for k, val in m["versions"].items()),
                "idle_rss_mib": m["idle_rss_mib"], "remark": a.remark}
        print(m["report"])
        print("versions: " + info["versions"])
        print(f"a fresh interpreter with dampline imported: {info['idle_rss_mib']:.0f} MiB")
        rows, walls = [], {}
        for name in names:
            if not available(name):
                print(f"\n=== {name}: benchmarks/{CASES[name]}.py not present, skipped")
                continue
            print(f"\n=== {name} ({CASES[name]})", flush=True)
            got, walls[name] = run_case(name, a.quick, a.skip_mpmath)
            rows += got
        result = {"info": info, "rows": rows, "wall_s": walls}
    print("\n" + text_table(result["rows"]))
    if a.json and not a.from_json:
        Path(a.json).write_text(json.dumps(result, indent=1, default=float))
    if a.readme:
        write_readme(result)
        print(f"\nwrote the table into {README}")
    failed = [r["case"] for r in result["rows"] if str(r.get("notes", "")).startswith("FAILED")]
    return 1 if failed else 0
