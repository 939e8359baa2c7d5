"""Command line: ``python -m toolkit <command> ...`` (also installed as ``stresspath``).

Commands
--------
recover RESULTS --method l2|lumped|average|spr [--across-regions] [--case NAME] --out nodal.csv
    Read a result folder or ``.npz`` file, recover a nodal field, write it as
    CSV with columns ``node,region,<components>``.
export-vtu RESULTS --method l2|lumped|average|spr|none [--across-regions] [--case NAME] --out model.vtu
    Write the mesh, the recovered nodal field (point data) and the raw
    integration-point values (cell data) as a VTK XML unstructured grid.

Results with several load cases: ``--case NAME`` takes one; without it
every case is recovered (one solve, the cases' components as columns) and
written side by side, component ``c`` of case ``k`` as ``k.c``.
render WORKBOOK [--set name=value ...] [--params file.json] [TITLE] [--pdf] --out DIR
    Execute a workbook with its parameters and write the executed notebook,
    an offline HTML report and <name>.summary.json (toolkit.workbook); with
    ``--pdf`` also a PDF of the report (needs a headless Chromium).
study WORKBOOK (--vary NAME=V1,V2,... ... | --sets FILE.csv) --out DIR [--workers N | --cluster ADDRESS|local:N]
        [--plot Y[,Y2]:X ...] [TITLE]
    Render a workbook once per parameter set (the cross product of the
    ``--vary`` lists, or one row of ``--sets`` per variant, an empty cell
    keeping the default) into DIR/<variant>/, skipping variants whose report is
    complete with the same inputs, and write DIR/study.csv and DIR/study.html;
    exit 0 every variant rendered, 1 some failed (listed on stderr), 2 bad
    input (every variant is checked before anything runs).
new TEMPLATE NAME [TITLE] --out DIR
    Start a workbook for a new component from one of the templates.

TITLE: the report's title block, ``--project``, ``--document``,
``--component``, ``--revision``, ``--prepared-by``, ``--checked-by``,
``--date`` and ``--title-file FILE.json`` (an object with those keys,
underscores for hyphens; the single options win).  A field not given shows as
"not given".
demo [--out reports] [--recovery-only]
    The recovery demo, then every workbook rendered with its defaults.

Exit codes: 0 done (a FAIL in a check is still a written report); 2 bad
input (a :class:`toolkit.errors.StresspathError` or an ``OSError``: one line
``error: <reason>`` on stderr, no output file written or changed; an output
that is one of the inputs is bad input, and so is a workbook cell that stops
on the toolkit's own ``InputError`` or ``ParameterError``, e.g. a parameter
checked against the data it names: its ``<name>.failed.ipynb`` is written); 1 a workbook cell failed otherwise (one line;
``<name>.failed.ipynb`` holds the traceback, an earlier report is left as it
was), or an internal error: anything else is a bug in the toolkit, shown with
its traceback and a request to report it; 130 interrupted (Ctrl-C or
SIGTERM: one line ``error: interrupted``, earlier outputs left as they were).
Every output file is written whole or not at all (a temporary file renamed
into place).  Each subcommand is added by one
``_add_<name>`` function, so new commands are one function each.
"""
from __future__ import annotations

import argparse
import signal
import sys
import threading
import time
import traceback
from pathlib import Path

from toolkit.errors import StresspathError, WorkbookExecutionError
from toolkit.recovery.methods import METHODS as RECOVERY_METHODS, recover

#: Recovery methods by their command-line name, with a one-line description (from the registry
#: :data:`toolkit.recovery.METHODS`).
METHODS = {name: m.description for name, m in RECOVERY_METHODS.items()}

LARGE_INPUT_BYTES = 20_000_000   # --progress auto: report stages above this input size


def _recover(field, method: str, across_regions: bool):
    return recover(field, method, across_regions=across_regions)


# ---------------------------------------------------------------------------
# Progress on stderr
# ---------------------------------------------------------------------------
class _Progress:
    """Stage lines on stderr: ``[2/3] recover: l2, 1234 nodal rows (0.4 s)``,
    with a tqdm bar over the stages when tqdm is installed and stderr is a
    terminal."""

    def __init__(self, enabled: bool, stages: int):
        self.enabled = enabled
        self.stages = stages
        self.done = 0
        self.bar = None
        if enabled and sys.stderr.isatty():       # a bar only on a terminal; plain lines in logs
            try:
                from tqdm import tqdm
                self.bar = tqdm(total=stages, file=sys.stderr, unit="stage", leave=False,
                                bar_format="{desc} [{n_fmt}/{total_fmt}] {elapsed}")
            except ImportError:
                self.bar = None

    def start(self, name: str):
        self._t0 = time.perf_counter()
        self._name = name
        if self.bar is not None:
            self.bar.set_description_str(name)

    def finish(self, details: str = ""):
        self.done += 1
        if not self.enabled:
            return
        dt = time.perf_counter() - self._t0
        line = f"[{self.done}/{self.stages}] {self._name}: {details} ({dt:.2f} s)"
        if self.bar is not None:
            self.bar.write(line, file=sys.stderr)
            self.bar.update(1)
        else:
            print(line, file=sys.stderr, flush=True)

    def close(self):
        if self.bar is not None:
            self.bar.close()


def _input_size(path: Path) -> int:
    if path.is_file():
        return path.stat().st_size
    if path.is_dir():
        return sum(p.stat().st_size for p in path.iterdir() if p.is_file())
    return 0


def _progress(args, stages):
    mode = args.progress
    on = mode == "on" or (mode == "auto" and _input_size(Path(args.results)) >= LARGE_INPUT_BYTES)
    return _Progress(on, stages)


def _all_cases(cases):
    """One field holding every load case side by side: component ``c`` of
    case ``k`` becomes ``k.c`` (e.g. ``pull.sxx``).  Recovery is linear and
    per component, so recovering it recovers each case."""
    import numpy as np

    from toolkit.core.fields import GaussField

    fields = [f for _, f in cases.items()]
    values = {b: np.concatenate([f.values[b] for f in fields], axis=-1) for b in fields[0].values}
    comps = [f"{k}.{c}" for k in cases.names for c in cases.components]
    return GaussField(cases.mesh, values, comps, points=cases.points, name=cases.name)


def _read(args, prog):
    from toolkit.errors import InputError
    from toolkit.io import read_cases

    prog.start("read")
    mesh, cases = read_cases(args.results)
    if args.case is not None:
        if args.case not in cases:
            raise InputError(f"--case {args.case!r}: {args.results} has no such load case; its cases are "
                             f"{', '.join(map(repr, cases.names))}")
        field = cases[args.case]
    elif len(cases) == 1:
        field = cases[cases.names[0]]
    else:
        field = _all_cases(cases)
    npts = sum(v.shape[0] * v.shape[1] for v in field.values.values())
    prog.finish(f"{mesh.nnodes} nodes, {mesh.ncells} elements, {npts} integration points, "
                f"components {','.join(field.components)}")
    return mesh, field


def _recover_stage(args, field, prog):
    prog.start("recover")
    nodal = _recover(field, args.method, args.across_regions)
    info = nodal.info
    extra = ""
    if "iterations" in info:
        extra = f", {max(info['iterations'])} CG iterations"
    prog.finish(f"{args.method}, {len(nodal.node)} nodal rows{extra}"
                + (", smoothed across regions" if info.get("across_regions") else ""))
    return nodal


# ---------------------------------------------------------------------------
# Commands
# ---------------------------------------------------------------------------
def _refuse_input_as_output(args):
    """Exit 2 before anything runs if ``--out`` is the input or one of the files read from it."""
    from toolkit.io.files import refuse_input_as_output
    from toolkit.io.neutral import result_files

    refuse_input_as_output(args.out, result_files(args.results))


def _cmd_recover(args) -> int:
    from toolkit.io import write_nodal_csv

    _refuse_input_as_output(args)
    prog = _progress(args, 3)
    try:
        mesh, field = _read(args, prog)
        nodal = _recover_stage(args, field, prog)
        prog.start("write")
        write_nodal_csv(args.out, nodal)
        prog.finish(f"{len(nodal.node)} rows to {args.out}")
    finally:
        prog.close()
    return 0


def _cmd_export_vtu(args) -> int:
    from toolkit.io import write_vtu

    _refuse_input_as_output(args)
    prog = _progress(args, 3 if args.method != "none" else 2)
    try:
        mesh, field = _read(args, prog)
        nodal = None if args.method == "none" else _recover_stage(args, field, prog)
        prog.start("write")
        write_vtu(args.out, mesh, nodal=nodal, field=field)
        prog.finish(f"{mesh.ncells} cells to {args.out}")
    finally:
        prog.close()
    return 0


def _cmd_demo(args) -> int:
    """The recovery demo (nodal CSV and a picture), then every workbook
    rendered with its defaults into OUT/<workbook>/."""
    from pathlib import Path

    from toolkit.workbook.create import demo as render_all
    from toolkit.workbook.recovery_demo import run_demo

    out = Path(args.out)
    print("== recovery demo ==")
    run_demo(out / "recovery")
    if args.recovery_only:
        return 0
    print("\n== workbooks ==")
    render_all(out, progress=False)
    print(f"\nreports in {out}/: open <workbook>/<workbook>.html in a browser")
    return 0


def _cmd_render(args) -> int:
    """Exit code 0 done, 1 a cell failed, 2 bad input (one line on stderr; see :func:`main`)."""
    from toolkit.errors import ParameterError
    from toolkit.workbook.execute import render
    from toolkit.workbook.parameters import parse_assignment

    given = {}
    for a in args.assignments:
        k, v = parse_assignment(a)
        if k in given:
            raise ParameterError(f"--set {k} given twice")
        given[k] = v
    if args.pdf:
        from toolkit.workbook.pdf import require_chromium

        require_chromium()                       # refuse before anything runs
    r = render(args.workbook, args.out, params=given, params_file=args.params, timeout=args.timeout,
               progress=not args.quiet, title=_title(args), title_file=args.title_file)
    checks = r.summary["checks"]
    fails = sum(c["status"] == "FAIL" for c in checks)
    pdf = ""
    if args.pdf:
        from toolkit.workbook.pdf import write_pdf

        pdf = f", {write_pdf(r.html, r.html.with_suffix('.pdf'))}"
    print(f"wrote {r.notebook}, {r.html}{pdf}, {r.summary_path} in {r.seconds:.1f} s "
          f"(inputs {r.summary['inputs_hash']}; {len(checks)} checks, {fails} FAIL)")
    return 0


def _split_values(text: str) -> list:
    """``V1,V2,...`` -> values, each read as JSON where possible, else as text."""
    from toolkit.workbook.parameters import parse_assignment

    return [parse_assignment(f"x={v}")[1] for v in text.split(",")]


def _study_sets(args) -> list:
    """The study's parameter sets from ``--vary`` (cross product) or ``--sets`` (one CSV row each)."""
    from toolkit.errors import ParameterError
    from toolkit.workbook.study import grid

    if bool(args.vary) == bool(args.sets):
        raise ParameterError("give the variants either with --vary NAME=V1,V2,... (repeatable) or with --sets FILE.csv")
    if args.vary:
        vary = {}
        for a in args.vary:
            name, sep, vals = a.partition("=")
            name = name.strip()
            if not sep or not name.isidentifier() or not vals.strip():
                raise ParameterError(f"--vary {a!r}: write NAME=V1,V2,..., e.g. --vary width=80,100,120")
            if name in vary:
                raise ParameterError(f"--vary {name} given twice")
            vary[name] = _split_values(vals)
        return grid(vary)
    return _read_sets(Path(args.sets))


def _read_sets(path: Path) -> list:
    """One dict per row of a CSV file whose header names parameters (an empty cell keeps the default)."""
    import csv

    from toolkit.errors import ParameterError
    from toolkit.workbook.parameters import parse_assignment

    try:
        with open(path, newline="", encoding="utf-8-sig") as f:
            rows = list(csv.reader(f))
    except FileNotFoundError:
        raise ParameterError(f"--sets {path}: file not found") from None
    rows = [r for r in rows if any(c.strip() for c in r)]
    if len(rows) < 2:
        raise ParameterError(f"--sets {path}: expected a header of parameter names and at least one row")
    header = [h.strip() for h in rows[0]]
    bad = [h for h in header if not h.isidentifier()]
    if bad or len(set(header)) != len(header):
        raise ParameterError(f"--sets {path}: the header must name each parameter once (bad: {bad or 'a repeat'})")
    sets = []
    for i, r in enumerate(rows[1:], 2):
        if len(r) != len(header):
            raise ParameterError(f"--sets {path} line {i}: {len(r)} cells for {len(header)} columns")
        sets.append({h: parse_assignment(f"{h}={c.strip()}")[1] for h, c in zip(header, r) if c.strip()})
    return sets


def _cmd_study(args) -> int:
    """Exit code 0 all variants rendered, 1 some failed (listed), 2 bad input."""
    from contextlib import nullcontext

    from toolkit.errors import InputError
    from toolkit.workbook.study import check_study, cluster_executor, render_many
    from toolkit.workbook.study_table import parse_plot

    sets = _study_sets(args)
    plots = [parse_plot(p) for p in args.plot] or None
    if args.workers is not None and args.workers < 1:
        raise InputError(f"--workers {args.workers}: give 1 or more")
    if args.cluster and args.workers is not None:
        raise InputError("give --workers (a local pool) or --cluster, not both")
    check_study(args.workbook, sets, args.out)       # every variant checked before a cluster starts
    with (cluster_executor(args.cluster) if args.cluster else nullcontext()) as executor:
        r = render_many(args.workbook, sets, args.out, executor, workers=args.workers, timeout=args.timeout,
                        title=_title(args), progress=not args.quiet, plots=plots)
    done = [v for v in r.variants if v.status == "done"]
    print(f"{len(done)} of {len(r.variants)} variants done ({sum(v.skipped for v in done)} already up to date) "
          f"in {r.seconds:.1f} s; table {r.csv}, {r.html}")
    for v in r.failed:
        print(f"error: variant {v.folder} {v.status}: {v.reason}", file=sys.stderr)
    return 1 if r.failed else 0


def _cmd_new(args) -> int:
    from toolkit.workbook.create import new_workbook

    p = new_workbook(args.template, args.name, args.out, title=_title(args), title_file=args.title_file)
    print(f"wrote {p}")
    return 0


_TITLE_OPTIONS = ("project", "document", "component", "revision", "prepared_by", "checked_by", "date")


def _title_options(p):
    g = p.add_argument_group("title block (not parameters: they change no result; a field not given "
                             "shows as 'not given')")
    for key in _TITLE_OPTIONS:
        g.add_argument("--" + key.replace("_", "-"), dest=f"title_{key}", metavar="TEXT",
                       help=f"{key.replace('_', ' ')} in the title block")
    g.add_argument("--title-file", metavar="FILE.json",
                   help="JSON object of title fields (keys " + ", ".join(_TITLE_OPTIONS) + "); single options win")


def _title(args) -> dict:
    return {k: getattr(args, f"title_{k}") for k in _TITLE_OPTIONS if getattr(args, f"title_{k}") is not None}


def _common(p, methods):
    p.add_argument("results", metavar="RESULTS", help="result folder (nodes.csv, elements.csv, gauss.csv) or .npz file")
    p.add_argument("--method", choices=methods, default="l2",
                   help="recovery method: " + "; ".join(f"{k}: {v}" for k, v in METHODS.items())
                   + ("; none: no nodal field" if "none" in methods else "") + " (default l2)")
    p.add_argument("--across-regions", action="store_true",
                   help="smooth across region boundaries (default: one value per region at shared nodes)")
    p.add_argument("--case", metavar="NAME",
                   help="the load case to take from results with several (default: all of them, each "
                        "component written as <case>.<component>, e.g. pull.sxx)")
    p.add_argument("--progress", choices=("auto", "on", "off"), default="auto",
                   help=f"stage lines on stderr (auto: for inputs above {LARGE_INPUT_BYTES // 1_000_000} MB)")


def _add_recover(sub):
    p = sub.add_parser("recover", help="recover a nodal field and write it as CSV",
                       description="Read a result folder or .npz file, recover a continuous nodal field from the "
                                   "integration-point values, and write node,region,<components> as CSV.")
    _common(p, list(METHODS))
    p.add_argument("--out", required=True, help="output CSV file")
    p.set_defaults(func=_cmd_recover)


def _add_export_vtu(sub):
    p = sub.add_parser("export-vtu", help="write mesh, nodal field and raw values as .vtu",
                       description="Write the mesh, the recovered nodal field (point data) and the raw "
                                   "integration-point values (cell data) as a VTK XML unstructured grid.")
    _common(p, list(METHODS) + ["none"])
    p.add_argument("--out", required=True, help="output .vtu file")
    p.set_defaults(func=_cmd_export_vtu)


def _add_demo(sub):
    p = sub.add_parser("demo", help="render every workbook with its defaults (and the recovery demo)")
    p.add_argument("--out", default="reports", help="output folder (default reports)")
    p.add_argument("--recovery-only", action="store_true", help="only the quick recovery demo")
    p.set_defaults(func=_cmd_demo)


def _add_render(sub):
    p = sub.add_parser("render", help="run a workbook and write notebook, HTML report and summary",
                       description="Run a workbook with parameters; write <name>.ipynb, <name>.html "
                                   "and <name>.summary.json into --out.")
    p.add_argument("workbook", help="workbook name in workbooks/ or path to an .ipynb")
    p.add_argument("--set", dest="assignments", action="append", default=[], metavar="NAME=VALUE",
                   help="set a parameter (value read as JSON where possible, else as text); repeatable")
    p.add_argument("--params", metavar="FILE.json", help="JSON object of parameter values (--set wins)")
    p.add_argument("--out", required=True, metavar="DIR", help="output folder")
    p.add_argument("--timeout", type=float, default=600, metavar="S", help="seconds allowed per cell (600)")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.add_argument("--pdf", action="store_true",
                   help="also print the report to <name>.pdf (needs a headless Chromium, e.g. Debian 'chromium')")
    _title_options(p)
    p.set_defaults(func=_cmd_render)


def _add_study(sub):
    p = sub.add_parser("study", help="render a workbook over many parameter sets, with a table and plots",
                       description="Render a workbook once per parameter set into DIR/<variant>/ (in parallel), "
                                   "then write DIR/study.csv and DIR/study.html. Variants whose report is "
                                   "complete with the same inputs are skipped, so a re-run completes the rest.")
    p.add_argument("workbook", help="workbook name in workbooks/ or path to an .ipynb")
    p.add_argument("--vary", action="append", default=[], metavar="NAME=V1,V2,...",
                   help="values of one parameter (each read as JSON where possible); repeatable: the cross product")
    p.add_argument("--sets", metavar="FILE.csv",
                   help="one variant per row; the header names the parameters, an empty cell keeps the default")
    p.add_argument("--out", required=True, metavar="DIR", help="study folder")
    p.add_argument("--workers", type=int, metavar="N", help="processes of the local pool (default: CPU count)")
    p.add_argument("--cluster", metavar="ADDRESS",
                   help="a Dask scheduler address (tcp://host:8786), or local:N for a local Dask cluster of N "
                        "workers (needs stresspath[cluster])")
    p.add_argument("--plot", action="append", default=[], metavar="Y[,Y2]:X",
                   help="plot summary values Y against parameter X in study.html; repeatable "
                        "(default: the key values against the first varied parameter)")
    p.add_argument("--timeout", type=float, default=600, metavar="S", help="seconds allowed per cell (600)")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    _title_options(p)
    p.set_defaults(func=_cmd_study)


def _add_new(sub):
    p = sub.add_parser("new", help="start a calculation from a template workbook",
                       description="Copy a template workbook to DIR/NAME.ipynb with outputs cleared "
                                   "and the title fields given stored (the component defaults to NAME).")
    p.add_argument("template", help="template name in workbooks/")
    p.add_argument("name", help="component name (also the file name)")
    p.add_argument("--out", required=True, metavar="DIR", help="output folder")
    _title_options(p)
    p.set_defaults(func=_cmd_new)


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="python -m toolkit",
                                     description="Stresspath: from integration-point stresses to continuous "
                                                 "fields, paths, design quantities and checks.")
    from toolkit import __version__
    parser.add_argument("--version", action="version", version=f"stresspath {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for add in (_add_recover, _add_export_vtu, _add_demo, _add_render, _add_study, _add_new):
        add(sub)
    return parser


def _one_line(e: BaseException) -> str:
    return " ".join(str(e).split()) or type(e).__name__


def _report_bug(e: BaseException) -> int:
    """An exception that is not the user's: the traceback, and who to tell."""
    from toolkit import __version__

    traceback.print_exception(e, file=sys.stderr)
    print(f"error: internal error in Stresspath {__version__} ({type(e).__name__}), not a problem with your "
          "input; please report it with the command line and the traceback above", file=sys.stderr)
    return 1


def main(argv=None) -> int:
    """Run the command line; returns the exit code (see the module notes).

    Only the toolkit's own errors (:class:`toolkit.errors.StresspathError`)
    and ``OSError`` are the user's to fix; any other exception is a bug."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as e:               # argparse: --help, --version, usage errors
        return e.code if isinstance(e.code, int) else (0 if e.code is None else 2)
    if getattr(args, "func", None) is None:
        parser.print_help(sys.stderr)
        return 2
    with _sigterm_interrupts():
        return _run(args)


def _raise_interrupt(signum, frame):
    from toolkit.workbook.execute import note_interrupt
    note_interrupt()                 # remembered, in case a library swallows the KeyboardInterrupt
    raise KeyboardInterrupt


class _sigterm_interrupts:
    """SIGINT and SIGTERM raise KeyboardInterrupt while a command runs (so it
    cleans up and exits 130) and are recorded, so a render whose
    KeyboardInterrupt was swallowed inside a library still stops before its
    report is installed; the previous handlers are restored after."""

    SIGNALS = (signal.SIGINT, signal.SIGTERM)

    def __enter__(self):
        from toolkit.workbook.execute import clear_interrupts
        clear_interrupts()
        self.installed = threading.current_thread() is threading.main_thread()
        if self.installed:
            self.old = {s: signal.signal(s, _raise_interrupt) for s in self.SIGNALS}

    def __exit__(self, *exc):
        if self.installed:
            for s, h in self.old.items():
                signal.signal(s, h if h is not None else signal.SIG_DFL)


def _run(args) -> int:
    try:
        return int(args.func(args) or 0)
    except WorkbookExecutionError as e:          # a cell failed: the executed notebook shows where
        print(f"error: {_one_line(e)}", file=sys.stderr)
        return 2 if e.bad_input else 1           # a cell stopped on the toolkit's own input error
    except (StresspathError, OSError) as e:
        print(f"error: {_one_line(e)}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("error: interrupted", file=sys.stderr)
        return 130
    except Exception as e:                       # noqa: BLE001 -- anything else is a bug: show it
        return _report_bug(e)


if __name__ == "__main__":
    sys.exit(main())
