"""Parameter studies: one workbook rendered over many parameter sets, each
set one :func:`toolkit.workbook.render` into its own subfolder, run through
any ``concurrent.futures`` executor (a local process pool by default, or the
executor of a Dask ``distributed.Client``), resumable, and summed up in
``study.csv`` and ``study.html`` (:mod:`toolkit.workbook.study_table`).
"""
from __future__ import annotations

import hashlib
import json
import os
import re
import sys
import time
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path

from toolkit.errors import InputError, ParameterError, StresspathError
from toolkit.workbook.execute import check_render, render, report_complete
from toolkit.workbook.notebook import resolve_workbook, workbook_parameters
from toolkit.workbook.study_table import parameter_unit, write_study

__all__ = ["render_many", "Variant", "StudyResult", "variant_folder", "check_study", "grid", "cluster_executor",
           "DONE", "FAILED", "NOT_RUN"]

#: A variant's outcome in the study table: its report is complete, its run failed, it did not run.
DONE, FAILED, NOT_RUN = "done", "failed", "not run"
_MAX_FOLDER = 80
_UNSAFE = re.compile(r"[^A-Za-z0-9.+-]")


@dataclass
class Variant:
    """One parameter set of a study: the values given, the run's full
    parameters, its subfolder and inputs hash, and, once run, its outcome."""

    index: int
    given: dict
    parameters: dict
    folder: str
    inputs_hash: str
    status: str = NOT_RUN
    reason: str = ""
    summary: dict | None = None
    skipped: bool = False        # its report was already complete with the same inputs hash
    seconds: float = 0.0


@dataclass
class StudyResult:
    """What :func:`render_many` did: the variants in the order given, and the table files."""

    workbook: str
    out: Path
    variants: list
    csv: Path | None = None
    html: Path | None = None
    seconds: float = 0.0
    units: dict | None = None       # the parameters' units, from the workbook's parameters cell

    @property
    def failed(self) -> list:
        """The variants whose report was not written (failed or not run)."""
        return [v for v in self.variants if v.status != DONE]

    @property
    def ok(self) -> bool:
        return not self.failed

    def __repr__(self):
        n = len(self.variants)
        done = sum(v.status == DONE for v in self.variants)
        skipped = sum(v.skipped for v in self.variants)
        return (f"StudyResult({self.workbook}: {done}/{n} variants done ({skipped} already up to date), "
                f"{sum(v.status == FAILED for v in self.variants)} failed, "
                f"{sum(v.status == NOT_RUN for v in self.variants)} not run, in {self.seconds:.1f} s; {self.out})")


def _value_text(v) -> str:
    if isinstance(v, bool):
        return str(v).lower()
    if isinstance(v, float):
        return format(v, ".12g")
    if isinstance(v, (int, str)):
        return str(v)
    return json.dumps(v, sort_keys=True, separators=(",", ":"))


def variant_folder(given: dict) -> str:
    """The subfolder name of a variant: ``name=value`` of each given
    parameter joined by ``_`` (``width=100_hole_diameter=25``), in the
    order given; ``defaults`` when none is given.  Characters other than
    letters, digits, ``.``, ``+`` and ``-`` in a value become ``-``; a name
    that had to be changed so, or is longer than 80 characters, ends in (or
    is replaced by) the first 8 hex digits of the SHA-256 of the canonical
    JSON of ``given``, so two different sets never share a folder.

    >>> variant_folder({"width": 100.0, "hole_diameter": 25.0})
    'width=100_hole_diameter=25'
    """
    if not given:
        return "defaults"
    raw = "_".join(f"{k}={_value_text(v)}" for k, v in given.items())
    safe = "_".join(f"{k}={_UNSAFE.sub('-', _value_text(v))}" for k, v in given.items())
    if safe == raw and len(raw) <= _MAX_FOLDER:
        return raw
    digest = hashlib.sha256(json.dumps(given, sort_keys=True, separators=(",", ":")).encode()).hexdigest()[:8]
    return (safe[:_MAX_FOLDER - 9] + "-" + digest) if len(safe) > _MAX_FOLDER else f"{safe}-{digest}"


def grid(vary: dict) -> list:
    """The cross product of ``{name: [values]}`` as a list of parameter sets,
    the last name varying fastest: ``grid({"a": [1, 2], "b": [3, 4]})`` is
    ``[{"a": 1, "b": 3}, {"a": 1, "b": 4}, {"a": 2, "b": 3}, {"a": 2, "b": 4}]``.

    >>> grid({"width": [80.0, 100.0], "element_size": [2.5]})
    [{'width': 80.0, 'element_size': 2.5}, {'width': 100.0, 'element_size': 2.5}]
    """
    import itertools

    for k, vals in vary.items():
        if isinstance(vals, (str, bytes)) or not hasattr(vals, "__iter__"):
            raise InputError(f"vary {k!r}: give a list of values, got {vals!r}")
        if not list(vals):
            raise InputError(f"vary {k!r}: no values")
    names = list(vary)
    return [dict(zip(names, combo)) for combo in itertools.product(*(list(vary[k]) for k in names))]


def check_study(workbook, parameter_sets, out) -> tuple:
    """Check every variant before anything runs, as :func:`render` would.

    Returns ``(workbook path, [Variant])``.  Raises :class:`ParameterError`
    naming every bad variant (its number, from 1, and its folder), and for
    two sets that give the same parameters; nothing is written.
    """
    path = resolve_workbook(workbook)
    sets = list(parameter_sets)
    if not sets:
        raise InputError("parameter_sets: no variants given")
    out = Path(out)
    problems, variants, by_params = [], [], {}
    for i, given in enumerate(sets, 1):
        if not isinstance(given, dict):
            raise InputError(f"parameter_sets: variant {i} is a {type(given).__name__}, not a dict of name: value")
        folder = variant_folder(given)
        try:
            values, h = check_render(path, out / folder, params=dict(given))
        except StresspathError as e:
            problems.append(f"variant {i} ({folder}): {e}")
            continue
        key = json.dumps(values, sort_keys=True)
        if key in by_params:
            problems.append(f"variant {i} ({folder}) has the same parameters as variant {by_params[key]}")
            continue
        by_params[key] = i
        variants.append(Variant(i, dict(given), values, folder, h))
    folders = {}
    for v in variants:
        if v.folder in folders:
            problems.append(f"variants {folders[v.folder]} and {v.index} share the folder {v.folder}")
        folders[v.folder] = v.index
    if problems:
        raise ParameterError("; ".join(problems))
    return path, variants


def _render_variant(workbook, folder, params, timeout, title):
    """One task of a study (runs in a worker): one render; a failure is returned, not raised."""
    t0 = time.perf_counter()
    try:
        r = render(workbook, folder, params=params, timeout=timeout, progress=False, title=title)
    except StresspathError as e:
        return {"status": FAILED, "reason": " ".join(str(e).split()), "seconds": time.perf_counter() - t0}
    return {"status": DONE, "summary": r.summary, "seconds": r.seconds}


def _read_summary_file(folder: Path, name: str) -> dict:
    return json.loads((folder / f"{name}.summary.json").read_text(encoding="utf-8"))


def _default_pool(workers):
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor

    # spawn: a clean interpreter per worker (forking a process that holds threads is unsafe)
    return ProcessPoolExecutor(max_workers=workers, mp_context=multiprocessing.get_context("spawn"))


def _progress_bar(total, enabled):
    from tqdm import tqdm

    return tqdm(total=total, desc="variants", unit="variant", disable=not enabled, file=sys.stderr, leave=True)


def render_many(workbook, parameter_sets, out, executor=None, *, workers=None, timeout=600, title=None,
                progress=False, plots=None, on_done=None) -> StudyResult:
    """Render one workbook over many parameter sets, each into its own subfolder of ``out``.

    Parameters
    ----------
    workbook : str or Path
        A name in ``workbooks/`` or a path to an ``.ipynb``.
    parameter_sets : iterable of dict
        One ``{name: value}`` per variant (see :func:`grid` for a cross product).
    out : str or Path
        The study folder: ``<out>/<variant folder>/`` holds each variant's report
        (:func:`variant_folder` names it from its parameters), ``<out>/study.csv``
        and ``<out>/study.html`` the table.
    executor : concurrent.futures.Executor, optional
        Where the renders run: any executor whose workers can import the toolkit
        (e.g. ``distributed.Client(address).get_executor()``, see
        :func:`cluster_executor`).  Default: a local process pool of ``workers``
        processes (default the machine's CPU count), shut down at the end.
    workers : int, optional
        Size of the default pool (ignored when ``executor`` is given).
    timeout, title
        As for :func:`render` (seconds per cell; title block fields, the same for every variant).
    progress : bool
        A progress bar over the variants on stderr.
    plots : list of (y names, x name), optional
        Plots in ``study.html``: summary values ``y`` against the parameter ``x``
        (default: the key values against the first varied parameter).
    on_done : callable, optional
        Called with each :class:`Variant` as it finishes.

    Every variant's parameters are checked first (:func:`check_study`:
    :class:`ParameterError` naming each bad one, nothing run).  A variant whose
    folder already holds a complete report with the same inputs hash is skipped,
    so re-running an interrupted or partly failed study completes the rest; each
    report is written whole or not at all by :func:`render`.  A variant that fails
    is recorded with its reason (``<name>.failed.ipynb`` in its folder for a failed
    cell) and the others go on; a task that did not run (cancelled, interrupted)
    is recorded as not run.  Returns a :class:`StudyResult`.

    The default pool starts its workers with ``spawn``: a script that calls
    render_many must guard its top level with ``if __name__ == "__main__":``
    (as any Python script using a process pool must on Windows and macOS).
    """
    from concurrent.futures import as_completed

    t0 = time.perf_counter()
    if workers is not None and (isinstance(workers, bool) or not isinstance(workers, int) or workers < 1):
        raise InputError(f"workers must be a whole number >= 1, got {workers!r}")
    path, variants = check_study(workbook, parameter_sets, out)
    out = Path(out).resolve()
    name = path.stem
    units = {k: parameter_unit(p) for k, p in workbook_parameters(path).items()}
    for ys, x in plots or []:
        if not any(x in v.given for v in variants):
            raise InputError(f"plot against {x!r}: not a parameter given in the study "
                             f"(given: {', '.join(sorted({k for v in variants for k in v.given})) or 'none'})")
    todo = []
    for v in variants:
        folder = out / v.folder
        if report_complete(folder, name, v.inputs_hash):
            v.status, v.skipped, v.summary = DONE, True, _read_summary_file(folder, name)
        else:
            todo.append(v)
    out.mkdir(parents=True, exist_ok=True)
    bar = _progress_bar(len(variants), progress)
    bar.update(len(variants) - len(todo))
    own = executor is None and bool(todo)
    if own:
        executor = _default_pool(min(workers or os.cpu_count() or 1, len(todo)))
    result = StudyResult(name, out, variants, units=units)
    futures = {}
    try:
        futures = {executor.submit(_render_variant, str(path), str(out / v.folder), v.given, timeout, title): v
                   for v in todo}
        for fut in as_completed(futures):
            v = futures[fut]
            if fut.cancelled():
                v.status, v.reason = NOT_RUN, "cancelled before it ran"
            else:
                try:
                    r = fut.result()
                except Exception as e:     # noqa: BLE001 -- a worker lost or a bug: recorded, the others go on
                    r = {"status": FAILED, "reason": f"{type(e).__name__}: {' '.join(str(e).split())}"}
                # the table names files relative to the study folder (the same wherever it ran)
                v.status, v.reason = r["status"], r.get("reason", "").replace(str(out) + os.sep, "")
                v.summary, v.seconds = r.get("summary"), r.get("seconds", 0.0)
            bar.update(1)
            if on_done is not None:
                on_done(v)
    except BaseException:
        for f in futures:             # interrupted: what has not started does not start
            f.cancel()
        raise
    finally:
        bar.close()
        if own:
            executor.shutdown(wait=True, cancel_futures=True)
        result.seconds = time.perf_counter() - t0
        result.csv, result.html = write_study(result, plots)
    return result


def _parse_cluster(spec: str):
    if spec.startswith("local:"):
        n = spec[len("local:"):]
        if not n.isdigit() or int(n) < 1:
            raise InputError(f"--cluster {spec!r}: write local:N with N >= 1 workers, e.g. local:2")
        return int(n)
    if not spec or any(c.isspace() for c in spec):
        raise InputError(f"--cluster {spec!r}: give a scheduler address such as tcp://scheduler:8786, or local:N")
    return spec


@contextmanager
def cluster_executor(spec: str):
    """A Dask executor for ``spec``: a scheduler address (``tcp://host:8786``)
    to connect to, or ``local:N`` to start a ``LocalCluster`` of N worker
    processes (one thread each) for the duration of the block.  Needs the
    ``cluster`` extra (``pip install stresspath[cluster]``); the workers must
    be able to import the toolkit and read the workbook."""
    target = _parse_cluster(spec)
    try:
        from distributed import Client, LocalCluster
    except ImportError:
        raise InputError("a Dask cluster needs dask.distributed: pip install 'stresspath[cluster]'") from None
    if isinstance(target, int):
        with LocalCluster(n_workers=target, threads_per_worker=1, processes=True, dashboard_address=None) as cl, \
                Client(cl) as client:
            yield client.get_executor(pure=False)
    else:
        with Client(target) as client:
            yield client.get_executor(pure=False)
