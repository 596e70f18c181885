"""The ``budget`` sub-command: can the star power an O−C modulation (Applegate budget)?"""

from __future__ import annotations

import argparse
import json

from ttvkit.cli.common import parse_quantity
from ttvkit.errors import InputError

__all__ = ["add_commands"]

_EPILOG_BUDGET = """\
examples:
  ttvkit budget --system star.toml --amplitude 40s --modulation-period 11yr
  ttvkit budget --system star.toml --amplitude 1.2min --modulation-period 25yr --json

The amplitude is the O−C semi-amplitude (half the peak-to-peak O−C).  An
energy ratio above 1 means the star cannot power the modulation in that
model.  The spin used is the star's rotation period when the system file
gives one, else synchronous rotation with the orbit (the output says which).
"""


def add_commands(sub) -> None:
    """Register ``budget``."""
    p = sub.add_parser("budget", help="can the star power an O−C modulation? (Applegate budget)",
                       description="The Applegate energy budget of an O−C modulation for the star "
                                   "of SYSTEM.toml, in the thin-shell and finite-shell models. "
                                   "A plausibility screen, not a proof.",
                       epilog=_EPILOG_BUDGET, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--system", required=True, help="system file (TOML, values with units)")
    p.add_argument("--amplitude", required=True, help="O−C semi-amplitude with a unit, e.g. 40s or 0.7min")
    p.add_argument("--modulation-period", required=True, help="modulation period with a unit, e.g. 11yr")
    p.add_argument("--shell-mass", type=float, default=0.1,
                   help="thin-shell mass as a fraction of the star's mass (default 0.1)")
    p.add_argument("--json", action="store_true", help="print one JSON object on stdout")
    p.set_defaults(func=_cmd_budget)


def _cmd_budget(args) -> int:
    from ttvkit.physics import System, activity_budgets

    system = System.from_toml(args.system)
    amplitude = parse_quantity(args.amplitude, "s", "--amplitude")
    period = parse_quantity(args.modulation_period, "yr", "--modulation-period")
    if amplitude.value <= 0 or period.value <= 0:
        raise InputError("--amplitude and --modulation-period must be positive")
    if not 0 < args.shell_mass < 1:
        raise InputError(f"--shell-mass {args.shell_mass:g} must be a fraction of the star's mass, "
                         "strictly between 0 and 1 (e.g. 0.1)")
    budgets = activity_budgets(system, amplitude, period, shell_mass_fraction=args.shell_mass)
    if args.json:
        print(json.dumps({"system": system.name, "models": {k: b.to_dict() for k, b in budgets.items()},
                          "caution": "a plausibility screen, not a proof"}, indent=2))
        return 0
    print(f"Applegate budget for {system.name}: O−C semi-amplitude {amplitude:.3g}, "
          f"modulation period {period:.3g}")
    first = next(iter(budgets.values()))
    print(f"  delta_P_over_P          {first.delta_P_over_P:.3e}")
    print(f"  spin used               {first.spin_used}")
    rows = [("delta_J", "delta_J", "kg m2 / s"), ("delta_E", "delta_E", "J"),
            ("energy_ratio", "energy_ratio", ""), ("delta_L_over_L", "delta_L_over_L", ""),
            ("delta_Omega_over_Omega", "delta_Omega_over_Omega", "")]
    print(f"  {'':24s}" + "".join(f"{k:>16s}" for k in budgets))
    for label, attr, unit in rows:
        vals = []
        for b in budgets.values():
            v = getattr(b, attr)
            vals.append(f"{(v.si.value if hasattr(v, 'si') else v):16.3e}")
        print(f"  {label:24s}" + "".join(vals) + (f"  {unit}" if unit else ""))
    print(f"  {'max amplitude (s)':24s}" + "".join(f"{b.max_amplitude.value:16.3g}" for b in budgets.values()))
    for name, b in budgets.items():
        verdict = "cannot" if b.energy_ratio > 1 else "can"
        print(f"  {name}: the star {verdict} power this modulation ({b.structure})")
    print("  (a plausibility screen, not a proof; see the docs for each model's assumptions)")
    return 0
