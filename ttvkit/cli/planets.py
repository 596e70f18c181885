"""The ``planets`` sub-command of ``ttvkit``: several planets' mid-times fitted with one N-body model."""

from __future__ import annotations

import argparse
import json
import math
import os
import sys

__all__ = ["add_commands"]

#: Cap on the least squares' residual evaluations: user-made starting elements sit further from the
#: optimum than published ones (the library's default, 40, is for those); measured: an invented
#: pair near 3:2 started 25-40% off in mass converges in 985 system integrations (6 s).
_MAX_EVALUATIONS = 200

_EPILOG = """\
examples:
  ttvkit planets times.csv --elements start.toml --out fit/
  ttvkit planets --table b=b.csv --table c=c.ecsv --elements start.toml --out fit/ --student-t 4
  ttvkit planets times.csv --elements start.toml --out fit/ --sample --steps 3000 --workers 2

The mid-times: one table with a 'planet' column (--column planet=NAME maps
yours), or one table per planet with --table NAME=FILE (repeatable).  Each
is read like any timing table (--standard, --column, --ra/--dec for JD and
HJD times).  A planet with no mid-times needs 'transiting = false' in the
elements file.

The elements file (TOML): the epoch at which the elements osculate (BJD_TDB
days, not later than the first mid-time), the star's mass with its
uncertainty, and per planet [planets.NAME] its mass_ratio (or mass with a
unit), period, a transit mid-time t0, ecosw and esinw (omega as usual in
transit work: a transit at omega + f = 90 deg):

  epoch = 2459000.0
  [star]
  mass = "0.80 +- 0.03 Msun"
  [planets.b]
  mass = "4.0 Mearth"
  period = "5.0 d"
  t0 = 2459001.2
  ecosw = 0.0
  esinw = 0.0
  [planets.c]
  ...

Fits every planet's mass ratio, period, t0, ecosw and esinw by least squares
from the starting elements (Gaussian likelihood unless --student-t), prints
the masses (the star's mass uncertainty included), periods, e, omega and the
super-periods of near-resonant neighbours, and writes DIR/fitted_elements.toml
(readable as starting elements), DIR/planets.json and the O-C figure
DIR/planets_oc.png/.pdf.
"""


def add_commands(sub) -> None:
    """Register ``planets``."""
    from ttvkit.cli.common import add_target_options

    p = sub.add_parser("planets", help="fit several planets' mid-times with one N-body model (masses from TTVs)",
                       description="Fit the mid-times of several planets of one star jointly with an N-body "
                                   "model, from starting elements, and report the planets' masses, periods "
                                   "and eccentricities.", epilog=_EPILOG,
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("table", nargs="?", help="one timing table with a 'planet' column (or use --table)")
    p.add_argument("--table", dest="tables", action="append", default=[], metavar="NAME=FILE",
                   help="the timing table of planet NAME (repeatable; instead of one table with a planet column)")
    p.add_argument("--elements", required=True, metavar="FILE.toml", help="starting elements (TOML, see below)")
    p.add_argument("--out", required=True, metavar="DIR", help="output folder (new or empty)")
    p.add_argument("--force", action="store_true", help="replace ttvkit's earlier output in DIR")
    p.add_argument("--student-t", type=float, metavar="NU",
                   help="Student-t likelihood with NU degrees of freedom (outliers cost little); default Gaussian")
    p.add_argument("--step", type=float, metavar="DAYS",
                   help="integration step in days (default: the engine's choice from the shortest period)")
    g = p.add_argument_group("posterior sampling (emcee)")
    g.add_argument("--sample", action="store_true", help="sample the posterior around the fit")
    g.add_argument("--steps", type=int, default=2000, metavar="N",
                   help="steps per walker (default 2000; the first half is discarded)")
    g.add_argument("--walkers", type=int, metavar="N", help="walkers (default twice the parameters plus two)")
    g.add_argument("--seed", type=int, default=0, metavar="N", help="random seed of the sampler (default 0)")
    g.add_argument("--workers", type=int, metavar="N",
                   help="processes that integrate the walkers (default: one per core, up to 4)")
    p.add_argument("--no-progress", action="store_true", help="no progress bar")
    p.add_argument("--json", action="store_true", help="print planets.json's content on stdout")
    t = p.add_argument_group("reading the tables")
    t.add_argument("--standard", help="time standard of rows without one, e.g. BJD_TDB, HJD_UTC, BTJD")
    t.add_argument("--column", action="append", default=[], metavar="OURS=THEIRS",
                   help="map a column, e.g. --column planet=pl --column time=T_mid (repeatable)")
    t.add_argument("--uncertainty-unit", metavar="UNIT", help="unit of the uncertainty column when its header has none "
                                              "(default: d)")
    t.add_argument("--bare-bjd", metavar="STANDARD",
                   help="what rows labelled only 'BJD' mean, e.g. BJD_TDB (a warning names them)")
    add_target_options(p)
    p.set_defaults(func=_cmd_planets)


# ------------------------------------------------------------------------------------------ inputs
def _tables(args):
    """The tables argument of ``read_planet_times`` and the list of input files."""
    from ttvkit.errors import InputError

    if args.table and args.tables:
        raise InputError("give one table with a planet column or --table NAME=FILE per planet, not both")
    if not args.table and not args.tables:
        raise InputError("no mid-times: give a table with a planet column, or --table NAME=FILE per planet")
    if args.table:
        return args.table, [args.table]
    tables = {}
    for item in args.tables:
        name, sep, path = item.partition("=")
        name, path = name.strip(), path.strip()
        if not sep or not name or not path:
            raise InputError(f"--table {item!r} must be NAME=FILE, e.g. --table b=b.csv")
        if name in tables:
            raise InputError(f"--table names planet {name!r} twice ({tables[name]} and {path}); give one table "
                             "per planet, or one table with a planet column")
        tables[name] = path
    return tables, list(tables.values())


def _check_options(args):
    from ttvkit.errors import InputError

    if args.student_t is not None and not (math.isfinite(args.student_t) and args.student_t > 0):
        raise InputError(f"--student-t {args.student_t}: the degrees of freedom must be positive")
    if args.step is not None and not (math.isfinite(args.step) and args.step > 0):
        raise InputError(f"--step {args.step}: the integration step must be a positive number of days")
    if args.steps < 10:
        raise InputError(f"--steps {args.steps}: need at least 10")
    if args.walkers is not None and args.walkers < 2:
        raise InputError(f"--walkers {args.walkers}: need at least 2")
    if args.workers is not None and args.workers < 1:
        raise InputError(f"--workers {args.workers}: need at least 1")


def _check_numbering(system, theta, data, times, elements) -> None:
    """Refuse starting elements that leave a mid-time's transit number ambiguous (off > P/4)."""
    import numpy as np

    from ttvkit.errors import InputError

    predicted = system.predict(theta, data)[0]
    period = np.array([elements.planet(system.names[i]).period for i in data.planet])
    off = (data.time - predicted) / period
    bad = np.flatnonzero(~(np.abs(off) <= 0.25))
    if bad.size:
        i = bad[np.argmax(np.abs(np.nan_to_num(off[bad], nan=1.0)))]
        name = system.names[data.planet[i]]
        raise InputError(f"{times.origin[i]}, column 'time': the starting elements of planet {name} put its "
                         f"nearest transit {abs(off[i]) * period[i]:.4g} d ({abs(off[i]):.2f} of a period) "
                         f"from this mid-time ({bad.size} row(s) over a quarter period off): its transit "
                         f"number is ambiguous; give better starting elements in {elements.source} "
                         "(period and t0)")


# ---------------------------------------------------------------------------------------- summary
def _ecc_omega(x, y, cov2):
    """e and ω (deg) with 1σ from (e cos ω, e sin ω) and their 2×2 covariance (linearised)."""
    e = math.hypot(x, y)
    omega = math.degrees(math.atan2(y, x)) % 360.0
    if e == 0:
        return e, math.sqrt(max(cov2[0][0] + cov2[1][1], 0.0) / 2), omega, float("nan")
    var_e = (x * x * cov2[0][0] + y * y * cov2[1][1] + 2 * x * y * cov2[0][1]) / e ** 2
    var_w = (y * y * cov2[0][0] + x * x * cov2[1][1] - 2 * x * y * cov2[0][1]) / e ** 4
    return e, math.sqrt(max(var_e, 0.0)), omega, math.degrees(math.sqrt(max(var_w, 0.0)))


def _super_periods(system, theta, cov):
    """Adjacent near-resonant pairs with the super-period's 1σ from the periods' covariance."""
    import numpy as np

    from ttvkit.hypotheses.planetary_system import ELEMENTS

    k = len(ELEMENTS)
    rows = []
    for inner, outer, j, ps in system.super_periods(theta):
        a, b = system.names.index(inner), system.names.index(outer)
        p_in, p_out = theta[a * k + 1], theta[b * k + 1]
        # P_sup = 1/|j/P' − (j−1)/P|: derivatives by P and P'
        sign = np.sign(j / p_out - (j - 1) / p_in)
        grad = np.zeros(theta.size)
        grad[a * k + 1] = -sign * ps ** 2 * (j - 1) / p_in ** 2
        grad[b * k + 1] = sign * ps ** 2 * j / p_out ** 2
        rows.append({"inner": inner, "outer": outer, "j": int(j), "resonance": f"{j}:{j - 1}",
                     "super_period_d": float(ps), "super_period_error_d": float(np.sqrt(max(grad @ cov @ grad, 0)))})
    return rows


def _summary(args, elements, times, system, result, chain_note):
    import numpy as np

    from ttvkit._version import __version__
    from ttvkit.hypotheses.planetary_system import ELEMENTS

    k = len(ELEMENTS)
    theta, cov, err = result.theta, result.covariance, result.errors
    z = result.residuals / result.data.sigma
    planets = {}
    for (name, mass, mass_err), i in zip(system.masses_earth(theta, cov), range(len(system.names))):
        s = slice(i * k, (i + 1) * k)
        th, er = theta[s], err[s]
        e, e_err, w, w_err = _ecc_omega(th[3], th[4], cov[i * k + 3:i * k + 5, i * k + 3:i * k + 5].tolist())
        rows = result.data.planet == i
        planets[name] = {
            "transiting": bool(elements.planet(name).transiting), "n_times": int(rows.sum()),
            "mass_earth": {"value": mass, "error": mass_err},
            **{e_name: {"value": float(v), "error": float(ee)} for e_name, v, ee in zip(ELEMENTS, th, er)},
            "eccentricity": {"value": e, "error": e_err}, "omega_deg": {"value": w, "error": w_err},
            "rms_residual_s": float(np.sqrt(np.mean(result.residuals[rows] ** 2)) * 86400) if rows.any() else None,
        }
    n, p = result.data.n, theta.size
    like = result.likelihood
    notes = list(result.notes) + ([chain_note] if chain_note else [])
    return {
        "written_by": f"ttvkit {__version__} planets",
        "elements_file": str(args.elements),
        "tables": args.table if args.table else dict(t.split("=", 1) for t in args.tables),
        "epoch_bjd_tdb": elements.epoch,
        "star_mass_msun": {"value": float(elements.star_mass.value), "error": float(elements.star_mass_error.value)},
        "likelihood": {"kind": like.kind, **({"dof": like.dof} if like.kind == "student-t" else {})},
        "n_times": n, "n_parameters": p, "chi2": float(np.sum(z ** 2)), "dof": n - p,
        "log_likelihood": result.log_likelihood, "evaluations": result.evaluations,
        "seconds": result.seconds, "sampled": result.samples is not None,
        "time_units": "elements: days and BJD_TDB; mass_ratio = m/M_*",
        "planets": planets, "super_periods": _super_periods(system, theta, cov),
        "parameter_names": list(system.parameter_names), "covariance": cov.tolist(),
        "notes": notes, "table_warnings": list(times.warnings),
    }


def _chain_note(result, walkers) -> str | None:
    """How long the kept chain is against its autocorrelation time (emcee's estimate)."""
    import emcee
    import numpy as np

    kept = result.samples.reshape(-1, walkers, result.theta.size)
    tau = float(np.max(emcee.autocorr.integrated_time(kept, tol=0))) if kept.shape[0] > 1 else float("nan")
    if not kept.shape[0] >= 50 * tau:
        return (f"the kept chain ({kept.shape[0]} steps) is shorter than 50 autocorrelation times "
                f"(up to {tau:.0f} steps, itself uncertain): the walkers start close together at the fit, so "
                "the errors may be too small; run longer with --steps")
    return None


def _print(d: dict, args) -> None:
    from ttvkit.report.numbers import format_value

    like = d["likelihood"]
    kind = "Gaussian" if like["kind"] == "gaussian" else f"Student-t (nu = {like['dof']:g})"
    print(f"planets: joint N-body fit of {', '.join(d['planets'])} to {d['n_times']} mid-times; "
          f"{kind} likelihood{'; sampled' if d['sampled'] else ''}")
    print(f"  chi2 = {d['chi2']:.2f} for {d['dof']} dof (reduced {d['chi2'] / max(d['dof'], 1):.2f}); "
          f"{d['evaluations']} system integrations, {d['seconds']:.1f} s")
    rows = [("planet", "mass (Earth masses)", "period (d)", "e", "omega (deg)", "mid-times")]
    for name, pl in d["planets"].items():
        def f(key):
            return format_value(pl[key]["value"], pl[key]["error"])
        rows.append((name, f("mass_earth"), f("period"), f("eccentricity"),
                     format_value(pl["omega_deg"]["value"], pl["omega_deg"]["error"])
                     if math.isfinite(pl["omega_deg"]["error"]) else "undefined",
                     str(pl["n_times"]) if pl["transiting"] else "none (not transiting)"))
    widths = [max(len(r[c]) for r in rows) for c in range(len(rows[0]))]
    print()
    for r in rows:
        print("  " + "  ".join(v.ljust(w) for v, w in zip(r, widths)).rstrip())
    star = d["star_mass_msun"]
    print(f"  (masses include the star's {star['value']:g} ± {star['error']:g} Msun; 1 sigma "
          f"{'from the posterior' if d['sampled'] else 'from the fit covariance'})")
    print()
    if d["super_periods"]:
        print("  super-periods of adjacent near-resonant pairs (Lithwick, Xie & Wu 2012):")
        for s in d["super_periods"]:
            print(f"    {s['inner']}-{s['outer']}  near {s['resonance']}  "
                  f"{format_value(s['super_period_d'], s['super_period_error_d'])} d")
    else:
        print("  no adjacent pair lies within 5% of a first-order resonance (no super-period)")
    for note in d["notes"]:
        print(f"  note: {note}")
    print(f"wrote {args.out}/fitted_elements.toml, planets.json, planets_oc.png/.pdf")


# ---------------------------------------------------------------------------------------- command
def _cmd_planets(args) -> int:
    from ttvkit.cli.common import parse_columns, parse_observer, parse_target
    from ttvkit.hypotheses.planetary_system import PlanetarySystem
    from ttvkit.inference.joint import fit_joint, sample_joint
    from ttvkit.inference.likelihood import Likelihood
    from ttvkit.io.outdir import check_folder, staged_folder
    from ttvkit.report.figures import planetary_system_figure, save_figure
    from ttvkit.timing.planets import read_planet_times, read_starting_elements

    _check_options(args)
    tables, inputs = _tables(args)
    inputs = inputs + [args.elements]
    check_folder(args.out, args.force, inputs=inputs)
    elements = read_starting_elements(args.elements)
    columns = parse_columns(args.column, example="planet=pl")
    units = {"uncertainty": args.uncertainty_unit} if args.uncertainty_unit else {}
    times = read_planet_times(tables, elements, standard=args.standard, target=parse_target(args),
                              observer=parse_observer(args), columns=columns, units=units,
                              bare_bjd=args.bare_bjd)
    system = PlanetarySystem(**elements.system_arguments(), step=args.step)
    theta = system.vector(elements.as_dict())
    data = system.match(theta, times.planet, times.time, times.sigma)
    _check_numbering(system, theta, data, times, elements)
    like = Likelihood("student-t", dof=args.student_t) if args.student_t else Likelihood()
    result = fit_joint(system, data, theta, like, max_evaluations=_MAX_EVALUATIONS)
    chain_note = None
    if args.sample:
        from ttvkit.inference.fitting import local_pool

        walkers = args.walkers or 2 * theta.size + 2
        workers = min(4, os.cpu_count() or 1) if args.workers is None else args.workers
        pool = local_pool(workers)
        try:
            result = sample_joint(result, n_steps=args.steps, n_walkers=walkers, seed=args.seed, executor=pool,
                                  chunks=workers,
                                  progress=not args.no_progress and not args.json)
        finally:
            if pool is not None:
                pool.shutdown()
        chain_note = _chain_note(result, walkers)
    summary = _summary(args, elements, times, system, result, chain_note)
    fitted = {name: {e: pl[e]["value"] for e in ("mass_ratio", "period", "t0", "ecosw", "esinw")}
              for name, pl in summary["planets"].items()}
    errors = {name: {e: pl[e]["error"] for e in ("mass_ratio", "period", "t0", "ecosw", "esinw")}
              for name, pl in summary["planets"].items()}
    text = json.dumps(summary, indent=2) + "\n"
    title = elements.name or ", ".join(system.names)
    with staged_folder(args.out, args.force, inputs=inputs) as stage:
        header = (f"Elements fitted by ttvkit planets ({summary['likelihood']['kind']} likelihood) to the "
                  f"mid-times of {summary['tables']}\nfrom the starting elements {args.elements}; "
                  "Jacobi, osculating at the epoch; readable as starting elements")
        (stage / "fitted_elements.toml").write_text(elements.with_values(fitted).to_toml(errors, header),
                                                    encoding="utf-8")
        (stage / "planets.json").write_text(text, encoding="utf-8")
        save_figure(planetary_system_figure(system.oc_curves(result.theta, data), title), stage / "planets_oc")
    if args.json:
        sys.stdout.write(text)
    else:
        _print(summary, args)
    return 0
