"""Running a workbook: :func:`render` checks the run's parameters, injects
them, executes the notebook in a fresh kernel and writes the report files.

Given a workbook and the parameter values of a run, :func:`render` checks the
values against the parameters cell before anything executes, inserts them in
a cell tagged ``injected-parameters`` right after it, executes the notebook in
a fresh ``python3`` kernel of the current interpreter and writes, into the
output folder::

    <name>.ipynb          the executed notebook (deterministic: two runs with the
                          same inputs give byte-identical files)
    <name>.html           a self-contained report that opens with no network
    <name>.summary.json   the results the workbook recorded with ``Summary``

The final ``<name>.summary.json``::

    {"workbook": name, "title": {...}, "toolkit_version": ..., "inputs_hash": ...,
     "parameters": {...}, "inputs": {"files": {...}, "sn_data": ..., "toolkit_version": ...},
     "values": {"name": {"value": ..., "unit": ...}},
     "checks": [{"name", "value", "limit", "utilization", "status"[, "unit"]}]}

``title`` holds the title block's fields (``"not given"`` where none was
given; see :mod:`toolkit.report.title`), passed to the kernel in
``STRESSPATH_TITLE``; it does not enter the hash.  ``parameters`` are the
values the run used (defaults plus given values, in the parameters-cell
order); ``inputs`` is ``inputs_record`` of them (digests of
the files and folders they name, of the S-N data, and the toolkit version),
taken before the kernel starts; ``inputs_hash`` is ``inputs_hash(parameters,
inputs)``.  If the workbook passed ``parameters=`` to ``Summary``, render
checks they equal the run's parameters and that the record the kernel saw
equals its own, so the hash printed in the workbook's footer
(``report.footer``) is the one in the summary file.

Re-running: given an executed notebook, render starts from the values it was
rendered with (its summary record, else its injected cell); ``params_file``
and ``params`` win, name by name.  ``params_file`` may be a run's
summary.json: its ``parameters`` are used and its workbook must be this one.
The notebook is validated (nbformat) before anything runs.

Nothing is lost: the three files are written into a staging folder inside the
output folder and renamed into place only after the whole run succeeded, so a
failed cell, a timeout, a full disk, Ctrl-C or SIGTERM leave an earlier report
exactly as it was (a failed run writes ``<name>.failed.ipynb`` with the
traceback instead).  A lock file in the output folder (``.render.lock``,
holding the pid) keeps a second render out of the folder while one runs; a
lock left by a process that is gone is taken over.  render never writes over
the workbook it runs, nor over a notebook in the output folder that is not a
report from render (one without ``<name>.html`` beside it).

Kernel working directory: :func:`render` runs the kernel in the output folder,
so any file a workbook writes lands beside its report, never in
``workbooks/``.  The workbook's own folder is passed to the kernel in
``STRESSPATH_WORKBOOK_DIR``; :func:`workbook_dir` returns it (under ``pytest
--nbval`` the kernel already runs in the workbook's folder, and
:func:`workbook_dir` returns that).

The kernel listens on local (IPC) sockets under a path of its own, not on
TCP ports, so renders running in parallel (:func:`toolkit.workbook.render_many`)
cannot race for a port (see :data:`KERNEL_TRANSPORT`).

The notebook libraries (nbformat, nbclient, tqdm) are imported when needed.
"""
from __future__ import annotations

import json
import math
import os
import sys
import time
from dataclasses import dataclass
from pathlib import Path

from toolkit.errors import WorkbookError, WorkbookExecutionError
from toolkit.io.files import atomic_write
from toolkit.report.format import json_text, plain
from toolkit.report.summary import CALLER_DIR_ENV, WORKBOOK_DIR_ENV, inputs_hash, inputs_record, read_summary
from toolkit.report.tables import HEADLESS_ENV
from toolkit.report.title import TITLE_ENV
from toolkit.workbook.html import notebook_html
from toolkit.workbook.notebook import (clean_notebook, clear_outputs, drop_injected, ensure_ids, inject_parameters,
                                       parameters_cell, read_notebook, recorded_parameters, resolve_workbook,
                                       validate_notebook, write_notebook)
from toolkit.workbook.parameters import parse_parameters, read_parameters_file, resolve_values
from toolkit.workbook.title import run_title

__all__ = ["render", "check_render", "RenderResult", "workbook_dir", "WORKBOOK_DIR_ENV", "KERNELSPEC",
           "KERNEL_TRANSPORT", "LOCK_FILE", "report_complete"]

KERNELSPEC = {"display_name": "Python 3 (ipykernel)", "language": "python", "name": "python3"}
#: How render's kernel talks to it: local (Unix domain) sockets where the system has them, so
#: renders running in parallel (a parameter study) never race for the same TCP ports
#: ("Address already in use"); TCP on Windows.
KERNEL_TRANSPORT = "tcp" if os.name == "nt" else "ipc"


def workbook_dir() -> Path:
    """Folder of the workbook being run (see the module notes on the working directory)."""
    return Path(os.environ.get(WORKBOOK_DIR_ENV) or os.getcwd())


def _kernel_manager_class():
    """An async kernel manager whose ``python3`` kernel is ipykernel on this interpreter."""
    import ipykernel.kernelspec
    from jupyter_client import AsyncKernelManager
    from jupyter_client.kernelspec import KernelSpecManager, NoSuchKernel
    from traitlets import default

    class _HereSpecs(KernelSpecManager):
        def get_kernel_spec(self, kernel_name):
            if kernel_name != "python3":
                raise NoSuchKernel(kernel_name)
            return self.kernel_spec_class(resource_dir=ipykernel.kernelspec.RESOURCES,
                                          **ipykernel.kernelspec.get_kernel_dict())

    class _HereKernelManager(AsyncKernelManager):
        @default("kernel_spec_manager")
        def _here_specs(self):
            return _HereSpecs(parent=self)

        @default("transport")
        def _ipc_transport(self):
            return KERNEL_TRANSPORT

        @default("ip")
        def _own_ipc_path(self):
            # with IPC the "ip" is the socket files' path prefix; jupyter_client's default
            # ("kernel-ipc" in the working directory, numbered from 1) would be shared by
            # parallel kernels, so each kernel gets its own prefix in the temporary folder
            if self.transport != "ipc":
                return super()._ip_default()
            import tempfile
            import uuid

            return os.path.join(tempfile.gettempdir(), f"stresspath-kernel-{uuid.uuid4().hex}-ipc")

    return _HereKernelManager


@dataclass
class RenderResult:
    """What :func:`render` wrote: paths, the run's parameters, the summary and the time taken."""

    name: str
    notebook: Path
    html: Path
    summary_path: Path
    parameters: dict
    summary: dict
    seconds: float
    cells: int = 0

    def __repr__(self):
        checks = self.summary.get("checks", [])
        fails = sum(c["status"] == "FAIL" for c in checks)
        return (f"RenderResult({self.name}: {self.cells} code cells in {self.seconds:.1f} s, "
                f"{len(self.summary.get('values', {}))} values, {len(checks)} checks ({fails} FAIL); "
                f"{self.notebook.parent})")


@dataclass
class _Run:
    """One checked run: the workbook, its notebook, the parameters cell and the values."""

    path: Path
    nb: object
    pidx: int
    values: dict
    overrides: dict
    out: Path
    inputs: dict = None
    title: dict | None = None

    @property
    def name(self):
        return self.path.stem

    @property
    def label(self):
        return self.path.name


def _check_run(workbook, out_dir, params, params_file) -> _Run:
    """Step 1: read the workbook and check every given value against its
    parameters cell (ParameterError, nothing written) and the output folder."""
    path = resolve_workbook(workbook)
    label = path.name
    nb = read_notebook(path)
    spec = nb.metadata.get("kernelspec", {}).get("name")
    if spec not in (None, "python3"):
        raise WorkbookError(f"{label} names kernel {spec!r}; workbooks run on 'python3'")
    validate_notebook(nb, label)
    # An executed notebook re-runs with the values it was rendered with; then drop its injected cell.
    given = recorded_parameters(nb, label)
    drop_injected(nb)
    pidx = parameters_cell(nb, label)
    params_def = parse_parameters(nb.cells[pidx].source, label)
    given = {k: v for k, v in given.items() if k in params_def}   # --params and --set win, name by name
    if params_file is not None:
        given.update(read_parameters_file(params_file, workbook=path.stem))
    if params:
        given.update(params)
    values, overrides = resolve_values(params_def, given, label)
    out = Path(out_dir).resolve()
    if out == path.parent:
        raise WorkbookError(f"output folder {out} is the workbook's own folder; choose another (e.g. reports/)")
    inputs = inputs_record(plain(values, "parameters"), dirs=[path.parent, Path.cwd()])
    return _Run(path, nb, pidx, values, overrides, out, inputs)


def _inject(run: _Run):
    """Step 2: the run's values in a cell after the parameters cell, outputs
    cleared, cell ids and the ``python3`` kernelspec set."""
    nb = run.nb
    inject_parameters(nb, run.pidx, run.overrides)
    clear_outputs(nb)
    ensure_ids(nb)
    nb.metadata["kernelspec"] = dict(KERNELSPEC)


def _client_class():
    """An nbclient ``NotebookClient`` that leaves SIGINT and SIGTERM to the
    caller: nbclient's own handlers only schedule a kernel shutdown, so the
    run would end as "the kernel died" instead of as an interruption.  This is
    nbclient's ``async_setup_kernel`` without its signal handlers and exit
    hook; :func:`_stop_kernel` stops the kernel however the run ends."""
    from contextlib import asynccontextmanager

    from nbclient import NotebookClient

    class _Client(NotebookClient):
        @asynccontextmanager
        async def async_setup_kernel(self, **kwargs):
            import asyncio

            self.stresspath_loop = asyncio.get_running_loop()
            cleanup_kc = kwargs.pop("cleanup_kc", self.owns_km)
            if self.km is None:
                self.km = self.create_kernel_manager()
            if not self.km.has_kernel:
                await self.async_start_new_kernel(**kwargs)
            if self.kc is None:
                await self.async_start_new_kernel_client()
            try:
                yield
            finally:
                if cleanup_kc:
                    await self._async_cleanup_kernel()

    return _Client


def _stop_kernel(client):
    """Stop the client's kernel if it still runs: after an interruption the
    event loop stopped mid-run, so the kernel process is killed directly and
    the run's unfinished task is cancelled."""
    import asyncio

    km = getattr(client, "km", None)
    if km is None:
        return
    proc = getattr(getattr(km, "provisioner", None), "process", None)
    if proc is not None and proc.poll() is None:
        proc.kill()
        proc.wait(10)
    loop = getattr(client, "stresspath_loop", None)
    if loop is not None and not loop.is_running() and not loop.is_closed():
        tasks = [t for t in asyncio.all_tasks(loop) if not t.done()]
        for t in tasks:
            t.cancel()
        if tasks:
            loop.run_until_complete(asyncio.gather(*tasks, return_exceptions=True))
    if getattr(client, "kc", None) is not None:
        client.kc.stop_channels()
    if getattr(client, "km", None) is not None:
        client.km.cleanup_connection_file()
        client.km.cleanup_ipc_files()      # the socket files of an IPC kernel that was killed


def _execute(run: _Run, failed_path, timeout, progress) -> int:
    """Step 3: execute the notebook in a fresh kernel working in the output
    folder; returns the number of code cells.  If a cell fails, the cleaned
    notebook with the traceback is written to ``failed_path`` and
    WorkbookExecutionError is raised.  The kernel is stopped in every case
    (a failure, Ctrl-C, SIGTERM)."""
    from nbclient.exceptions import CellExecutionError, CellTimeoutError, DeadKernelError
    from tqdm import tqdm

    nb = run.nb
    n_code = sum(1 for c in nb.cells if c.cell_type == "code" and c.source.strip())
    bar = tqdm(total=n_code, desc=run.name, unit="cell", disable=not progress, file=sys.stderr, leave=True)
    current = {"index": None}

    def on_start(cell, cell_index):
        current["index"] = cell_index

    def on_executed(cell, cell_index, execute_reply):  # after the reply, unlike on_cell_complete
        bar.update(1)

    timeout = math.ceil(timeout)     # nbclient takes whole seconds (a float such as 2.5 was refused)
    client = _client_class()(nb, kernel_name="python3", timeout=timeout, record_timing=False,
                             kernel_manager_class=_kernel_manager_class(),
                             # the kernel app's own start-up warnings (not cell output) stay quiet
                             extra_arguments=["--IPKernelApp.log_level=ERROR"],
                             shutdown_kernel="immediate",   # a timed-out cell need not be waited for
                             resources={"metadata": {"path": str(run.out)}},
                             on_cell_start=on_start, on_cell_executed=on_executed)
    env = dict(os.environ)
    env[WORKBOOK_DIR_ENV] = str(run.path.parent)
    env[CALLER_DIR_ENV] = os.getcwd()    # the kernel finds imported files where render did (inputs hash)
    env[HEADLESS_ENV] = "1"          # no live widgets: see toolkit.report.headless
    env[TITLE_ENV] = json.dumps(run.title or {})   # the title block: see toolkit.report.title
    try:
        client.execute(env=env)
    except (CellExecutionError, CellTimeoutError, DeadKernelError) as e:
        bar.close()
        clean_notebook(nb)
        write_notebook(nb, failed_path)
        i = current["index"]
        where = f"cell {i + 1} (id {nb.cells[i].get('id')})" if i is not None else "start-up"
        if isinstance(e, CellExecutionError):
            reason = f"{e.ename}: {e.evalue}"
        elif isinstance(e, CellTimeoutError):
            reason = f"no result within {timeout:g} s"
        else:
            reason = "the kernel died"
        raise WorkbookExecutionError(f"{run.label} failed in {where}: {reason}; the executed notebook with the "
                                     f"traceback is {failed_path} (an earlier report is left as it was)",
                                     notebook=failed_path,
                                     bad_input=isinstance(e, CellExecutionError)
                                     and e.ename in ("InputError", "ParameterError")) from None
    finally:
        bar.close()
        _stop_kernel(client)
    clean_notebook(nb)
    return n_code


def _write_report(run: _Run, html_path, sum_path) -> dict:
    """Step 4: the summary the workbook saved, checked against the run's
    parameters, written as ``<name>.summary.json`` beside the offline HTML report."""
    label = run.label
    try:
        data = read_summary(run.nb)
    except WorkbookError as e:
        raise WorkbookError(f"{label}: {e}") from None
    run_params = plain(run.values, "parameters")
    if "parameters" in data and data["parameters"] != run_params:
        rec = data["parameters"]
        diff = sorted(set(rec) ^ set(run_params)) + sorted(k for k in set(rec) & set(run_params)
                                                           if rec[k] != run_params[k])
        raise WorkbookError(f"{label}: Summary(parameters=...) differs from the run's parameters in "
                            f"{', '.join(diff)}; pass every parameter unchanged")
    if "inputs" in data and data["inputs"] != run.inputs:
        changed = sorted(k for k in set(data["inputs"]) | set(run.inputs) if data["inputs"].get(k) != run.inputs.get(k))
        raise WorkbookError(f"{label}: the inputs changed while the workbook ran ({', '.join(changed)}); "
                            "render again")
    from toolkit import __version__

    summary = {"workbook": run.name, "title": run.title, "toolkit_version": __version__,
               "inputs_hash": inputs_hash(run_params, run.inputs), "parameters": run_params,
               "inputs": run.inputs, "values": data["values"], "checks": data["checks"]}
    atomic_write(html_path, lambda f: f.write(notebook_html(run.nb, run.name, summary, run.title)))
    atomic_write(sum_path, lambda f: f.write(json_text(summary)))
    return summary


#: The lock file render holds in its output folder while it writes there.
LOCK_FILE = ".render.lock"


def _pid_alive(pid: int) -> bool:
    """Whether process ``pid`` runs (on Windows, where signal 0 would end it, assume so)."""
    if os.name == "nt":
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:          # another user's live process
        return True
    return True


class _FolderLock:
    """The output folder's lock file, created exclusively and holding the pid;
    a lock whose process is gone is taken over, a live one refused."""

    def __init__(self, folder: Path):
        self.path = folder / LOCK_FILE
        self.held = False

    def __enter__(self):
        for _ in range(50):             # an empty lock is being written just now: look again
            try:
                fd = os.open(self.path, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
            except FileExistsError:
                try:
                    pid = int(self.path.read_text().strip() or 0)
                except (OSError, ValueError):
                    pid = 0
                if pid and _pid_alive(pid):
                    raise WorkbookError(f"another render is writing into {self.path.parent} (pid {pid}); "
                                        f"wait for it or choose another --out (if none runs, remove "
                                        f"{self.path})") from None
                if pid:
                    self.path.unlink(missing_ok=True)       # stale: its process is gone
                else:
                    time.sleep(0.1)
                continue
            with os.fdopen(fd, "w") as f:
                f.write(f"{os.getpid()}\n")
            self.held = True
            return self
        raise WorkbookError(f"cannot take the lock {self.path}; remove it if no render is running")

    def __exit__(self, *exc):
        if self.held:
            self.path.unlink(missing_ok=True)


def _report_paths(out: Path, name: str) -> dict:
    """The files a run writes: the report (notebook, HTML, summary) and the failed notebook."""
    return {"notebook": out / f"{name}.ipynb", "html": out / f"{name}.html",
            "summary": out / f"{name}.summary.json", "failed": out / f"{name}.failed.ipynb"}


def _check_targets(run: _Run, paths: dict):
    """Refuse (WorkbookError, nothing written) to write over the workbook
    itself or over a notebook in the output folder that is not a report from
    render (one with no ``<name>.html`` beside it, e.g. a workbook made by ``new``)."""
    from toolkit.io.files import same_file

    for p in paths.values():
        if same_file(p, run.path):
            raise WorkbookError(f"{p} is the workbook being rendered; choose another --out")
    nb_path = paths["notebook"]
    if nb_path.exists() and not paths["html"].exists():
        raise WorkbookError(f"{nb_path} exists and is not a report from render (no {paths['html'].name} beside "
                            f"it); choose another --out or move it")


_INTERRUPTS = []        # interruptions asked for in this process (see note_interrupt)


def note_interrupt():
    """Record that the user asked to stop (called by the command line's
    SIGINT/SIGTERM handler before it raises KeyboardInterrupt).  The
    KeyboardInterrupt can be swallowed where it lands (a library's event
    loop catching BaseException); the record is checked again before a
    report is renamed into place, so an interrupted render never installs
    its report."""
    _INTERRUPTS.append(True)


def clear_interrupts():
    """Forget earlier interruptions (a new command starts uninterrupted)."""
    _INTERRUPTS.clear()


def _install(staged: dict, paths: dict):
    """Rename the staged report files into place, with SIGINT and SIGTERM held
    back so an interruption cannot leave a mixed report; an interruption
    asked for earlier (:func:`note_interrupt`) stops it before anything moves."""
    import signal

    block = hasattr(signal, "pthread_sigmask")
    if block:
        old = signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGINT, signal.SIGTERM})
    try:
        if _INTERRUPTS:
            raise KeyboardInterrupt
        for key, tmp in staged.items():
            os.replace(tmp, paths[key])
        paths["failed"].unlink(missing_ok=True)      # an earlier failure's notebook is now out of date
    finally:
        if block:
            signal.pthread_sigmask(signal.SIG_SETMASK, old)


def check_render(workbook, out_dir, params=None) -> tuple[dict, str]:
    """Check a run as :func:`render` would, without running anything.

    Returns ``(parameters, inputs_hash)``: the run's full parameter values
    (defaults plus ``params``, as JSON-ready values) and the inputs hash its
    ``<name>.summary.json`` would carry (:func:`toolkit.report.summary.inputs_hash`
    of them and of :func:`~toolkit.report.summary.inputs_record`).  Raises
    :class:`ParameterError` for a bad value and :class:`WorkbookError` for an
    output folder render would refuse, as render does, before anything is written.
    """
    run = _check_run(workbook, out_dir, params, None)
    _check_targets(run, _report_paths(run.out, run.name))
    values = plain(run.values, "parameters")
    return values, inputs_hash(values, run.inputs)


def report_complete(out_dir, name, expected_hash=None) -> bool:
    """Whether ``out_dir`` holds a whole report of workbook ``name`` (notebook,
    HTML and summary, the files :func:`render` installs together), and, if
    ``expected_hash`` is given, one whose summary carries that inputs hash."""
    paths = _report_paths(Path(out_dir), name)
    if not all(paths[k].is_file() for k in ("notebook", "html", "summary")):
        return False
    if expected_hash is None:
        return True
    try:
        data = json.loads(paths["summary"].read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return False
    return isinstance(data, dict) and data.get("inputs_hash") == expected_hash


def render(workbook, out_dir, params=None, params_file=None, timeout=600, progress=True, title=None,
           title_file=None) -> RenderResult:
    """Run a workbook with parameters and write ``<name>.ipynb``, ``<name>.html`` and ``<name>.summary.json``.

    Parameters
    ----------
    workbook : str or Path
        A name in ``workbooks/`` (``"plate_with_hole"``) or a path to an ``.ipynb``.
    out_dir : str or Path
        Output folder (created if needed; must not be the workbook's own folder).
        It is also the kernel's working directory.
    params : dict, optional
        Parameter values for this run; they override ``params_file``.
    params_file : str or Path, optional
        A JSON object of parameter values, or a run's summary.json (its ``parameters``).
    timeout : float
        Seconds allowed per cell (rounded up to whole seconds).
    progress : bool
        Show a progress bar over the code cells (stderr).
    title : dict, optional
        Title block fields (project, document, component, revision,
        prepared_by, checked_by, date); they override ``title_file``, which
        overrides those ``new`` stored in the notebook.  Not workbook
        parameters: they change no result and no inputs hash.
    title_file : str or Path, optional
        A JSON object of title fields.

    Every given value is checked against the parameters cell before anything
    runs (:class:`ParameterError`, nothing written).  The report files are
    written into a staging folder inside ``out_dir`` and renamed into place
    only when the whole run succeeded, so an earlier report stays as it was
    after any failure or interruption.  If a cell fails, the executed notebook
    with the traceback is written as ``<name>.failed.ipynb`` and
    :class:`WorkbookExecutionError` is raised.  While it runs, render holds a
    lock file in ``out_dir``; a second render into the same folder is refused.
    """
    import shutil
    import tempfile

    t0 = time.perf_counter()
    run = _check_run(workbook, out_dir, params, params_file)
    run.title = run_title(run.nb, title, title_file)
    _inject(run)
    out, name = run.out, run.name
    paths = _report_paths(out, name)
    _check_targets(run, paths)
    out.mkdir(parents=True, exist_ok=True)
    with _FolderLock(out):
        stage = Path(tempfile.mkdtemp(prefix=f".{name}.staging-", dir=out))
        try:
            n_code = _execute(run, paths["failed"], timeout, progress)
            staged = {k: stage / paths[k].name for k in ("notebook", "html", "summary")}
            write_notebook(run.nb, staged["notebook"])
            summary = _write_report(run, staged["html"], staged["summary"])
            _install(staged, paths)
        finally:
            shutil.rmtree(stage, ignore_errors=True)
    return RenderResult(name, paths["notebook"], paths["html"], paths["summary"], run.values, summary,
                        time.perf_counter() - t0, n_code)
