"""Mutation check: plant known wrong methods one at a time and see the suite kill each.

Not a test module (pytest collects ``test_*.py`` only); run it as a script:

    python tests/mutants.py              # every mutant against its own selection of tests
    python tests/mutants.py --list       # the list, nothing run
    python tests/mutants.py --only vm-shear-factor,cg-update-sign
    python tests/mutants.py --full       # every mutant against the whole unit suite (slow)

Each entry of :data:`MUTANTS` names a file, an exact snippet of its source
(it must occur exactly once, else the script stops before running anything,
so the list stays in step with the code), the replacement, a one-line
description of the wrong method, and the pytest selection that should kill
it (test files, optionally ``-k``; a run takes seconds).

The repository's tracked files are copied to a temporary folder (the working
tree is never touched: an interrupted run leaves nothing behind but that
folder, which is removed on exit); the two package-data links
``toolkit/data`` and ``toolkit/workbooks`` are made inside the copy.  Before
the mutants, every selection is run once on the unmutated copy: it must pass
(otherwise a "kill" would mean nothing).  Then one mutant at a time is written
into the copy and ``python -m pytest -x -q -p no:cacheprovider <selection>``
runs there, with ``PYTHONPATH`` set to the copy (so the copy's toolkit is
imported) and no bytecode written (a mutant of the same length as the
original could otherwise be masked by a stale ``.pyc``).  A mutant is killed
when a test fails or errors, or when the run exceeds ``--timeout``.

Prints a table (id, killed, by which test, seconds, description); exit code
0 when every mutant is killed, 1 otherwise (2 for a list out of step with the
code or a failing baseline).
"""
from __future__ import annotations

import argparse
import os
import re
import shutil
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

#: pytest options of every run: the repository's addopts switch nbval on and
#: collect the workbooks, so they are replaced (the selections are unit tests)
PYTEST = ["-x", "-q", "-p", "no:cacheprovider", "-p", "no:nbval", "-o", "addopts=", "-rfE"]

#: --full: the whole unit suite (the notebook and wheel-building tests are integration tests, left out)
FULL = ["tests", "--ignore=tests/test_workbooks.py", "--ignore=tests/test_workbook.py",
        "--ignore=tests/test_install.py", "--ignore=tests/test_notebook_hygiene.py"]


@dataclass(frozen=True)
class Mutant:
    id: str
    file: str
    find: str
    replace: str
    description: str
    selection: tuple[str, ...]


def M(id, file, find, replace, description, *selection):
    return Mutant(id, file, find, replace, description, tuple(selection))


ELEM, MESH, CG = "toolkit/core/elements.py", "toolkit/core/mesh.py", "toolkit/core/cg.py"
STRESS, PROJ = "toolkit/core/stress.py", "toolkit/recovery/projection.py"
HOT, CHECKS, CONV = "toolkit/assess/hotspot.py", "toolkit/assess/checks.py", "toolkit/assess/convergence.py"

MUTANTS: list[Mutant] = [
    # -- elements and rules
    M("tri3-gauss-point", ELEM,
      '("tri", 3): ("tri 3-point", 2, [("a", 1 / 6, 1 / 3)]),',
      '("tri", 3): ("tri 3-point", 2, [("a", 1 / 5, 1 / 3)]),',
      "3-point triangle rule with its points at (1/5, 1/5, 3/5) instead of (1/6, 1/6, 2/3)",
      "tests/test_elements.py"),
    M("tri7-gauss-weight", ELEM,
      '("c", None, 0.225),',
      '("c", None, 0.25),',
      "7-point triangle rule with centroid weight 0.25 instead of 0.225 (9/40)",
      "tests/test_elements.py"),
    M("gauss-degree-claim", ELEM,
      'return QuadratureRule(f"gauss {label}", shape, pts, wts, 2 * n - 1)',
      'return QuadratureRule(f"gauss {label}", shape, pts, wts, 2 * n)',
      "n-point Gauss-Legendre rule declared exact to degree 2n instead of 2n - 1",
      "tests/test_elements.py"),
    M("shape-gradient-sign", ELEM,
      "dfac = np.where(lower >= 0, exps[:, d], 0)[None, :]",
      "dfac = np.where(lower >= 0, -exps[:, d], 0)[None, :]",
      "shape-function derivatives with the wrong sign (d x^e / dx = -e x^(e-1))",
      "tests/test_elements.py"),
    M("jacobian-transposed", MESH,
      'dNdx = np.einsum("qkj,cqji->cqki", dN, Jinv, optimize=True)',
      'dNdx = np.einsum("qkj,cqij->cqki", dN, Jinv, optimize=True)',
      "physical gradients with the transposed inverse Jacobian, dN/dx = J^-T dN/dxi read the wrong way",
      "tests/test_solve.py", "tests/test_indicator.py"),
    M("detj-sign", MESH,
      "return J[..., 0, 0] * J[..., 1, 1] - J[..., 0, 1] * J[..., 1, 0]",
      "return J[..., 0, 0] * J[..., 1, 1] + J[..., 0, 1] * J[..., 1, 0]",
      "2D Jacobian determinant J00 J11 + J01 J10 (sign of the cross term)",
      "tests/test_mesh_fields.py", "tests/test_recovery.py"),
    M("hex8-mass-rule-low", ELEM,
      "full_rule_points=8, reduced_rule_points=1, mass_rule_points=27,",
      "full_rule_points=8, reduced_rule_points=1, mass_rule_points=8,",
      "hex8 mass matrix by 2x2x2 Gauss, one degree too low for N^T N det J (degree 4 per coordinate)",
      "tests/test_elements.py", "tests/test_reference_skfem.py"),
    M("rhs-rule-low", PROJ,
      "return rule_of_degree(element.shape, ndeg + gdeg + element.detj_degree)",
      "return rule_of_degree(element.shape, ndeg + gdeg + element.detj_degree - 1)",
      "projection right-hand side integrated one degree too low",
      "tests/test_recovery.py", "tests/test_reference_skfem.py"),
    # -- projection solver
    M("precond-scaling", "toolkit/recovery/preconditioner.py",
      "s = 1.0 / around",
      "s = 1.0 / np.sqrt(around * sum_to_unknowns(cell_dofs, [P.diagonal() for P in blocks], ndof))",
      "element preconditioner rescaled to its own diagonal instead of weighted by measure share",
      "tests/test_linalg.py", "-k", "not wathen"),
    M("cg-update-sign", CG,
      "x += np.multiply(Pf[f], a, out=tt)",
      "x -= np.multiply(Pf[f], a, out=tt)",
      "CG iterate updated x -= alpha p instead of x += alpha p",
      "tests/test_linalg.py", "-k", "not wathen"),
    M("cg-beta-inverted", CG,
      "beta = np.where(done, 0.0, rz_new / np.where(rz == 0, 1.0, rz))",
      "beta = np.where(done, 0.0, rz / np.where(rz_new == 0, 1.0, rz_new))",
      "CG direction factor beta = r.z(old) / r.z(new), inverted",
      "tests/test_linalg.py", "-k", "not wathen"),
    M("cg-no-sparse-precond", CG,
      "            rz_new = np.sum(run(ph.precondition), axis=0)",
      "            pass",
      "CG with a sparse preconditioner never applies it after the first step (z stays stale)",
      "tests/test_linalg.py", "-k", "not wathen"),
    M("cg-no-jacobi", CG,
      "z = np.multiply(R[lo:hi], Pc[:, None], out=Z[lo:hi])",
      "z = np.multiply(R[lo:hi], 1.0, out=Z[lo:hi])",
      "CG with a diagonal preconditioner applies it only at the start (z = r afterwards)",
      "tests/test_linalg.py", "-k", "not wathen"),
    M("zorder-not-mapped-back", PROJ,
      "            x = x[self._new_of_old]",
      "            x = x",
      "Z-order renumbered solution returned in the new numbering, not mapped back to the nodes",
      "tests/test_recovery.py"),
    M("hrz-equal-shares", PROJ,
      "hrz = d * (Me.measures() / (d @ np.ones(d.shape[1])))[:, None]",
      "hrz = np.repeat((Me.measures() / d.shape[1])[:, None], d.shape[1], axis=1)",
      "HRZ lumping replaced by equal shares of the cell measure",
      "tests/test_recovery.py"),
    # -- other recovery methods
    M("average-wrong-count", "toolkit/recovery/averaging.py",
      "count += np.bincount(d, minlength=dofs.ndof)",
      "count += np.bincount(d, minlength=dofs.ndof) > 0",
      "nodal averaging divides by the number of blocks at a node, not the number of cells",
      "tests/test_recovery.py"),
    M("spr-degree-low", "toolkit/recovery/spr.py",
      "degree.append(np.full(m, 1 if et.degree == 1 else 2))",
      "degree.append(np.full(m, 1))",
      "SPR patch polynomial linear for quadratic elements (one degree too low)",
      "tests/test_spr.py"),
    # -- stress
    M("vm-shear-factor", STRESS,
      "+ 3.0 * (sxy**2 + syz**2 + sxz**2)",
      "+ 1.0 * (sxy**2 + syz**2 + sxz**2)",
      "von Mises without the factor 3 on the shear terms",
      "tests/test_stress.py"),
    M("principal-ascending", STRESS,
      "return Principal(w[..., ::-1], V[..., :, ::-1])",
      "return Principal(w, V)",
      "3D principal stresses sorted smallest first instead of largest first",
      "tests/test_stress.py"),
    # -- assessment
    M("linearize-bending-4", HOT,
      "bnd = 6.0 * I1 / t**2",
      "bnd = 4.0 * I1 / t**2",
      "linearised bending stress (4/t^2) int s (t/2 - x) dx instead of 6/t^2",
      "tests/test_hotspot.py"),
    M("hotspot-coeffs-swapped", HOT,
      '"a-linear", (0.4, 1.0), "thickness", (1.67, -0.67), 0.4,',
      '"a-linear", (0.4, 1.0), "thickness", (-0.67, 1.67), 0.4,',
      "type a linear hot-spot coefficients 1.67 / -0.67 swapped",
      "tests/test_hotspot.py"),
    M("hotspot-lagrange-sign", HOT,
      "c[i] *= (target - x[j]) / (x[i] - x[j])",
      "c[i] *= (target - x[j]) / (x[j] - x[i])",
      "Lagrange extrapolation weights with the denominator's sign reversed",
      "tests/test_hotspot.py"),
    M("iiw-inch-25.0", HOT,
      '"in": 25.4}',
      '"in": 25.0}',
      "type b read-out distances in inch models with 25.0 mm per inch instead of 25.4",
      "tests/test_hotspot.py"),
    M("heywood-2.5", "toolkit/assess/references.py",
      "return 2.0 + (1.0 - d_over_w) ** 3",
      "return 2.0 + (1.0 - d_over_w) ** 2.5",
      "Heywood net-section Kt with exponent 2.5 instead of 3",
      "tests/test_references.py"),
    M("peterson-1.6", "toolkit/assess/references.py",
      "a = 0.0254 * (2070.0 / tensile_strength) ** 1.8",
      "a = 0.0254 * (2070.0 / tensile_strength) ** 1.6",
      "Peterson notch sensitivity length with exponent 1.6 instead of 1.8",
      "tests/test_references.py"),
    M("zz-denominator", "toolkit/assess/indicator.py",
      "ebar = target_eta * np.sqrt((self.norm**2 + self.error**2) / len(self.per_element))",
      "ebar = target_eta * np.sqrt(self.norm**2 / len(self.per_element))",
      "ZZ refinement ratio with ||e||^2 dropped from the permissible element error",
      "tests/test_indicator.py"),
    M("gci-safety-1.0", CONV,
      "def grid_convergence(values, sizes, safety_factor=1.25,",
      "def grid_convergence(values, sizes, safety_factor=1.0,",
      "GCI with safety factor 1.0 instead of 1.25 (three grids)",
      "tests/test_quality_gci.py"),
    M("richardson-order-q", CONV,
      "q = math.log(a / b)",
      "q = math.log(b / a)",
      "observed-order iteration with q(p) = ln((r32^p - s)/(r21^p - s)), inverted",
      "tests/test_quality_gci.py"),
    M("richardson-extrapolation", CONV,
      "ext = (rp21 * f1 - f2) / (rp21 - 1.0)",
      "ext = (rp21 * f2 - f1) / (rp21 - 1.0)",
      "Richardson extrapolation (r^p phi2 - phi1)/(r^p - 1), fine and coarse values swapped",
      "tests/test_quality_gci.py"),
    M("sn-slope-5", "data/sn_curves.json",
      '"m1": 3.0,',
      '"m1": 5.0,',
      "normal-stress S-N curves with slope 5 above the knee instead of 3",
      "tests/test_checks.py"),
    M("miner-max", CHECKS,
      'return float(d.sum()), {"design_range": sd, "life": N, "damage": d}',
      'return float(d.max()), {"design_range": sd, "life": N, "damage": d}',
      "Palmgren-Miner damage as the largest bin's share instead of the sum",
      "tests/test_checks.py"),
    M("thickness-exponent", CHECKS,
      '"cruciform-as-welded": (0.3,',
      '"cruciform-as-welded": (0.2,',
      "thickness correction exponent 0.2 instead of 0.3 for as-welded cruciform joints",
      "tests/test_checks.py"),
    M("thickness-effective", CHECKS,
      "return (t_ref / t_eff) ** n if t_eff > t_ref else 1.0",
      "return (t_ref / t) ** n if t > t_ref else 1.0",
      "thickness correction ignores the effective thickness 0.5 L of short attachments",
      "tests/test_checks.py"),
    # -- result reader
    M("point-tol-loose", "toolkit/io/points.py",
      "POINT_TOL = 1e-2",
      "POINT_TOL = 1e-1",
      "imported integration points matched with a tolerance ten times too loose (0.1 natural units)",
      "tests/test_io.py"),
    M("point-tol-tight", "toolkit/io/points.py",
      "POINT_TOL = 1e-2",
      "POINT_TOL = 1e-3",
      "imported integration points matched with a tolerance ten times too tight (exported rounding refused)",
      "tests/test_io.py"),
    # -- section resultants by nodal forces
    M("section-bending-4", "toolkit/assess/sections.py",
      "bnd = 6.0 * M / (t * t * width)",
      "bnd = 4.0 * M / (t * t * width)",
      "section bending 4 M / t^2 instead of 6 M / t^2",
      "tests/test_sections.py"),
    M("section-moment-about-start", "toolkit/assess/sections.py",
      "M = float(Fn @ (0.5 * t - s))",
      "M = float(Fn @ (0.0 - s))",
      "section moment taken about the first surface instead of the mid-point",
      "tests/test_sections.py"),
    M("section-both-sides", "toolkit/assess/sections.py",
      "sel = np.flatnonzero((np.sign(centroid_off) == sign) & on_sec[b.cells].any(axis=1))",
      "sel = np.flatnonzero(on_sec[b.cells].any(axis=1))",
      "nodal forces summed over the cells on both sides of the section",
      "tests/test_sections.py"),
    M("section-no-gauss-weights", "toolkit/assess/sections.py",
      'fe = np.einsum("cqkj,cqij,cq->cki", g.dNdx_cqki[sel], sig, g.dV_cq[sel], optimize=True)',
      'fe = np.einsum("cqkj,cqij,cq->cki", g.dNdx_cqki[sel], sig, g.detJ_cq[sel], optimize=True)',
      "nodal forces integrated without the Gauss weights (det J only)",
      "tests/test_sections.py"),
]


# ---------------------------------------------------------------------------
def check_list(mutants) -> list[str]:
    """Problems with the list: duplicate ids, missing files, snippets that do
    not occur exactly once, no-op replacements."""
    problems, seen = [], set()
    for m in mutants:
        if m.id in seen:
            problems.append(f"{m.id}: duplicate id")
        seen.add(m.id)
        p = ROOT / m.file
        if not p.is_file():
            problems.append(f"{m.id}: no file {m.file}")
            continue
        n = p.read_text(encoding="utf-8").count(m.find)
        if n != 1:
            problems.append(f"{m.id}: the snippet occurs {n} times in {m.file} (must be exactly once): {m.find!r}")
        if m.find == m.replace:
            problems.append(f"{m.id}: the replacement equals the snippet")
    return problems


def make_copy(dest: Path) -> None:
    """Copy the tracked files of the repository into ``dest`` and make the package-data links."""
    out = subprocess.run(["git", "ls-files", "-z"], cwd=ROOT, capture_output=True, check=True).stdout
    for rel in filter(None, out.decode().split("\0")):
        src = ROOT / rel
        if not src.is_file():                   # deleted in the working tree but still tracked
            continue
        target = dest / rel
        target.parent.mkdir(parents=True, exist_ok=True)
        shutil.copy2(src, target)
    for link, to in (("toolkit/data", "../data"), ("toolkit/workbooks", "../workbooks")):
        p = dest / link
        if not p.exists():
            p.symlink_to(to)


_FAIL = re.compile(r"^(?:FAILED|ERROR) (.+?)(?: - .*)?$", re.M)


def run_pytest(copy: Path, selection, timeout: float):
    """Run pytest in the copy: ``(outcome, first failing test, seconds)``; outcome
    is ``"pass"``, ``"fail"``, ``"timeout"`` or ``"error"`` (pytest could not run
    the selection: usage error, nothing collected)."""
    env = dict(os.environ, PYTHONPATH=str(copy), PYTHONDONTWRITEBYTECODE="1")
    cmd = [sys.executable, "-m", "pytest", *PYTEST, *selection]
    t0 = time.perf_counter()
    try:
        r = subprocess.run(cmd, cwd=copy, env=env, capture_output=True, text=True, timeout=timeout)
    except subprocess.TimeoutExpired:
        return "timeout", f"(no result in {timeout:g} s)", time.perf_counter() - t0
    dt = time.perf_counter() - t0
    text = r.stdout + r.stderr
    if r.returncode == 0:
        return "pass", "", dt
    hit = _FAIL.search(text)
    if r.returncode in (1, 2):                   # tests failed; 2: interrupted (e.g. a collection error)
        return "fail", hit.group(1) if hit else (text.strip().splitlines() or ["?"])[-1], dt
    return "error", f"pytest exit code {r.returncode}: {(text.strip().splitlines() or ['?'])[-1]}", dt


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--list", action="store_true", help="print the list and check it against the code; run nothing")
    ap.add_argument("--only", action="append", default=[], metavar="ID",
                    help="run only these mutants (repeat or comma-separate)")
    ap.add_argument("--full", action="store_true", help="run the whole unit suite against each mutant (slow)")
    ap.add_argument("--no-baseline", action="store_true", help="skip the runs of the unmutated copy")
    ap.add_argument("--timeout", type=float, default=900.0, help="seconds per pytest run (default 900)")
    args = ap.parse_args(argv)

    problems = check_list(MUTANTS)
    if problems:
        print("the mutant list is out of step with the code:\n  " + "\n  ".join(problems), file=sys.stderr)
        return 2
    chosen = MUTANTS
    if args.only:
        want = [w for a in args.only for w in a.split(",") if w]
        unknown = sorted(set(want) - {m.id for m in MUTANTS})
        if unknown:
            print(f"unknown mutant id(s): {', '.join(unknown)}; see --list", file=sys.stderr)
            return 2
        chosen = [m for m in MUTANTS if m.id in want]
    if args.list:
        w = max(len(m.id) for m in chosen)
        for m in chosen:
            print(f"{m.id:<{w}}  {m.file}  [{' '.join(m.selection)}]\n{'':<{w}}  {m.description}")
        print(f"{len(chosen)} mutants; every snippet occurs exactly once")
        return 0

    def selection(m):
        return FULL if args.full else list(m.selection)

    with tempfile.TemporaryDirectory(prefix="stresspath-mutants-") as tmp:
        copy = Path(tmp) / "repo"
        make_copy(copy)
        if not args.no_baseline:
            for sel in dict.fromkeys(tuple(selection(m)) for m in chosen):
                outcome, test, dt = run_pytest(copy, sel, args.timeout)
                print(f"baseline  {' '.join(sel)}: {outcome} ({dt:.1f} s)", flush=True)
                if outcome != "pass":
                    print(f"the unmutated code fails this selection ({test}); fix that first", file=sys.stderr)
                    return 2
        rows = []
        for m in chosen:
            path = copy / m.file
            original = path.read_text(encoding="utf-8")
            path.write_text(original.replace(m.find, m.replace, 1), encoding="utf-8")
            try:
                outcome, test, dt = run_pytest(copy, selection(m), args.timeout)
            finally:
                path.write_text(original, encoding="utf-8")
            killed = outcome in ("fail", "timeout")
            rows.append((m, killed, test if killed or outcome == "error" else "", dt))
            print(f"{m.id}: {'killed' if killed else 'SURVIVED'}{' by ' + test if test else ''} ({dt:.1f} s)",
                  flush=True)

    wid = max(len(m.id) for m in chosen)
    wt = max([len("by test")] + [len(r[2]) for r in rows])
    print()
    print(f"{'mutant':<{wid}}  killed  {'by test':<{wt}}  {'s':>6}  wrong method")
    for m, killed, test, dt in rows:
        print(f"{m.id:<{wid}}  {'yes' if killed else 'NO':<6}  {test:<{wt}}  {dt:6.1f}  {m.description}")
    survivors = [m.id for m, killed, _, _ in rows if not killed]
    print(f"\n{len(rows) - len(survivors)} of {len(rows)} mutants killed"
          + (f"; survivors: {', '.join(survivors)}" if survivors else ""))
    return 1 if survivors else 0


if __name__ == "__main__":
    sys.exit(main())
