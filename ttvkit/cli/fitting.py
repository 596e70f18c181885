"""The ``fit`` and ``compare`` sub-commands of ``ttvkit``."""

from __future__ import annotations

import argparse
import json

__all__ = ["add_commands"]

_EPILOG_FIT = """\
examples:
  ttvkit fit times.ecsv --hypothesis orbital-decay
  ttvkit fit times.ecsv --hypothesis sinusoidal-modulation --sample --json
  ttvkit fit times.ecsv --hypothesis orbital-decay+sinusoidal-modulation --robust --jitter
  ttvkit fit times.ecsv --hypothesis n-body-perturber --system star.toml

hypotheses: constant-period, orbital-decay, apsidal-precession,
sinusoidal-modulation, light-travel-time, near-resonant-perturber
(near-resonant-perturber(j=3) or (j=2, inner) for other cases),
n-body-perturber (a second planet integrated directly; needs --system for
the masses, and takes seconds to minutes per fit, far longer sampled); join
compatible ones with '+'.  In sinusoidal-modulation the amplitude is the
O−C semi-amplitude (half the peak-to-peak O−C).
"""

_EPILOG_COMPARE = """\
examples:
  ttvkit compare times.ecsv
  ttvkit compare times.ecsv --sample --json > comparison.json

Fits every hypothesis and the pairs orbital-decay+sinusoidal-modulation and
orbital-decay+light-travel-time, sorted by BIC.  A lower BIC is better;
a ΔBIC above 10 is very strong evidence (Kass & Raftery 1995).
"""


def _common(p):
    from ttvkit.cli.common import add_sampler_options, add_table_options

    p.add_argument("table", help="timing table (ECSV written by ttvkit, or CSV with --standard)")
    p.add_argument("--sample", action="store_true", help="sample the posterior with emcee")
    add_sampler_options(p)
    p.add_argument("--seed", type=int, default=0, help="random seed of the sampler (default 0)")
    p.add_argument("--jitter", action="store_true", help="fit an extra white timing noise")
    p.add_argument("--no-excess-noise", action="store_true",
                   help="do not add an excess-noise term when chi2 is too large for its dof (p < 0.01)")
    p.add_argument("--robust", action="store_true",
                   help="Student-t likelihood (nu = 4): outliers cost little")
    p.add_argument("--require-convergence", action="store_true",
                   help="fail if the chain is shorter than 50 autocorrelation times")
    p.add_argument("--no-progress", action="store_true", help="no progress bar")
    p.add_argument("--json", action="store_true", help="print one JSON object on stdout")
    p.add_argument("--system", help="system file (TOML): the masses and orbit that derived quantities "
                                    "and n-body-perturber need")
    add_table_options(p)


def add_commands(sub) -> None:
    """Register ``fit`` and ``compare``."""
    p = sub.add_parser("fit", help="fit one timing hypothesis",
                       description="Fit one timing hypothesis to a timing table by weighted least "
                                   "squares (and sample its posterior with --sample).",
                       epilog=_EPILOG_FIT, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--hypothesis", required=True, help="hypothesis name (see below)")
    _common(p)
    p.set_defaults(func=_cmd_fit)
    p = sub.add_parser("compare", help="fit every hypothesis and rank them by BIC",
                       description="Fit every timing hypothesis to a timing table and rank them by "
                                   "BIC.", epilog=_EPILOG_COMPARE,
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    _common(p)
    from ttvkit.cli.common import add_workers_option

    add_workers_option(p)
    p.set_defaults(func=_cmd_compare)


def _likelihood(args):
    from ttvkit.inference.likelihood import Likelihood

    return Likelihood("student-t" if args.robust else "gaussian", jitter=args.jitter)


def _run(args, hypotheses):
    """The fit (or comparison) and what the output must say about the table: ``(result, extra)``."""
    from ttvkit.cli.common import check_sampler_options, read_edited_table
    from ttvkit.inference.excess_noise import decide_excess_noise
    from ttvkit.inference.fitting import compare, fit, sample
    from ttvkit.inference.leverage import find_leverage

    check_sampler_options(args)
    table, edits, notes = read_edited_table(args, minimum=4 if len(hypotheses) > 1 else 1)
    extra = {"table_edits": edits.to_dict(), "table_notes": notes, "table_warnings": table.intake_warnings}
    context = None
    if args.system:
        from ttvkit.diagnosis.diagnose import timing_context
        from ttvkit.physics.system import System

        context = timing_context(System.from_toml(args.system))
    like = _likelihood(args)
    if not args.no_excess_noise:
        decision = decide_excess_noise(table, like, context=context)
        like = decision.likelihood
        extra["excess_noise"] = decision.to_dict()
    if len(hypotheses) == 1:
        result = fit(table, hypotheses[0], like, context=context)
        extra["leverage"] = find_leverage(result, table, context=context)
        if args.sample:
            result = sample(result, n_steps=args.steps, seed=args.seed, progress=not args.no_progress,
                            require_convergence=args.require_convergence, max_steps=args.max_steps)
        return result, extra
    from ttvkit.cli.common import hypothesis_pool

    pool = hypothesis_pool(args, args.sample)
    try:
        return compare(table, hypotheses, like, context=context, sampled=args.sample, n_steps=args.steps,
                       seed=args.seed, progress=not args.no_progress, max_steps=args.max_steps,
                       executor=pool), extra
    finally:
        if pool is not None:
            pool.shutdown()


def _say_extra(extra: dict) -> None:
    """Notes on the table, the excess noise and leverage, to stderr."""
    import sys

    for note in extra.get("table_notes", []):
        print(f"note: {note}", file=sys.stderr)
    message = extra.get("excess_noise", {}).get("message")
    if message:
        print(f"note: {message}", file=sys.stderr)
    for lev in extra.get("leverage", []):
        print(f"warning: {lev.message()}", file=sys.stderr)


def _print_fit(d: dict) -> None:
    from ttvkit.report.numbers import format_value

    print(f"{d['hypothesis']}: chi2 = {d['chi2']:.2f} for {d['dof']} dof "
          f"(reduced {d['reduced_chi2']:.2f}); BIC {d['bic']:.2f}; AIC {d['aic']:.2f}; "
          f"{d['likelihood']}{'; sampled' if d['sampled'] else ''}")
    # one column for every name: a literature table's per-source jitters carry long reference names
    width = max([24] + [len(name) for section in ("parameters", "derived") for name in d[section]])
    for section in ("parameters", "derived"):
        print(f"  {section}:")
        for name, v in d[section].items():
            print(f"    {name:{width}s} {format_value(v['value'], v['lower'], v['upper'])} {v['unit']}")
    for w in d["warnings"]:
        print(f"  warning: {w}")


def _cmd_fit(args) -> int:
    from ttvkit.hypotheses import get_hypothesis

    get_hypothesis(args.hypothesis)  # unknown names fail before any work
    result, extra = _run(args, [args.hypothesis])
    d = result.to_dict()
    d.update({k: v for k, v in extra.items() if k != "leverage"})
    d["leverage"] = [dict(lev, message=lev.message()) for lev in extra.get("leverage", [])]
    if args.json:
        print(json.dumps(d, indent=2, default=float))
    else:
        _print_fit(d)
    _say_extra(extra)
    return 0


def _cmd_compare(args) -> int:
    from ttvkit.hypotheses import DEFAULT_COMPARISON

    comparison, extra = _run(args, list(DEFAULT_COMPARISON))
    _say_extra(extra)
    if args.json:
        print(json.dumps({**comparison.to_dict(), **extra}, indent=2, default=float))
        return 0
    print(f"{'hypothesis':40s} {'k':>3s} {'chi2':>10s} {'dof':>4s} {'BIC':>11s} {'dBIC':>8s}")
    for row in comparison.rows():
        print(f"{row['hypothesis']:40s} {row['n_parameters']:3d} {row['chi2']:10.2f} {row['dof']:4d} "
              f"{row['bic']:11.2f} {row['delta_bic']:8.2f}")
    print("(lower BIC is better; dBIC > 10 is very strong evidence, Kass & Raftery 1995)")
    return 0
