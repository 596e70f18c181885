"""Timing hypotheses: every explanation of a timing drift, one small module each.

* ``constant-period``: T0 + P·E;
* ``orbital-decay``: adds ½ (dP/dE) E² (Patra et al. 2017);
* ``apsidal-precession``: first order in e (Giménez & Bastero 1995);
* ``sinusoidal-modulation``: adds A sin(2π(T−T0)/P_mod + φ), an activity
  cycle's shape (Applegate 1992); A is the O−C semi-amplitude;
* ``light-travel-time``: adds the Irwin (1952) delay of a distant companion;
* ``near-resonant-perturber``: adds a sinusoid at the super-period
  (Lithwick, Xie & Wu 2012); ``near-resonant-perturber(j=3)`` for other
  resonances;
* ``mass-transfer`` and ``magnetic-braking`` (eclipsing binaries with both
  stars described): the decay parabola read as conservative transfer or as
  wind braking;
* ``quasi-periodic-modulation``: a Gaussian-process O−C with a
  characteristic period and a coherence time (a cycle that wanders);
* ``n-body-perturber``: a second planet of any mass, period, eccentricity
  and phase, by direct N-body integration (slow: not in the default
  comparison).

Hypotheses that make sense together are joined with ``+``:
``orbital-decay+sinusoidal-modulation`` (one ephemeris term — constant
period, decay or precession — plus any additive terms).  A new hypothesis
is one small module with a :class:`~ttvkit.hypotheses.base.Term` subclass,
which registers itself (``Term.__init_subclass__``) once its module is imported below.
"""

from __future__ import annotations

import re

from ttvkit.errors import InputError
from ttvkit.hypotheses.base import (
    TERMS,
    Derived,
    HostContext,
    Hypothesis,
    Parameter,
    Term,
    TimingData,
)
from ttvkit.hypotheses.binary_period import BINARY_HYPOTHESES, MagneticBraking, MassTransfer
from ttvkit.hypotheses.ephemerides import ConstantPeriod, OrbitalDecay
from ttvkit.hypotheses.light_time import LightTravelTime
from ttvkit.hypotheses.modulation import SinusoidalModulation
from ttvkit.hypotheses.nbody_perturber import NBodyPerturber
from ttvkit.hypotheses.precession import ApsidalPrecession
from ttvkit.hypotheses.quasi_periodic import QuasiPeriodicModulation
from ttvkit.hypotheses.resonance import NearResonantPerturber

__all__ = ["Hypothesis", "Term", "Parameter", "Derived", "TimingData", "HostContext", "get_hypothesis",
           "HYPOTHESIS_NAMES", "DEFAULT_COMPARISON", "ConstantPeriod", "OrbitalDecay",
           "ApsidalPrecession", "SinusoidalModulation", "LightTravelTime", "NearResonantPerturber",
           "NBodyPerturber", "SLOW_HYPOTHESES", "MassTransfer", "MagneticBraking", "BINARY_HYPOTHESES",
           "QuasiPeriodicModulation", "BINARY_ADDITIONS"]

#: The single hypotheses, in the order of the list above (each module's Term registers itself).
_TERMS = {key: TERMS[key] for key in ("constant-period", "orbital-decay", "apsidal-precession",
                                      "sinusoidal-modulation", "light-travel-time", "near-resonant-perturber",
                                      "n-body-perturber")}
_TERMS.update({key: term for key, term in TERMS.items() if key not in _TERMS})

#: The single hypotheses, by name.
HYPOTHESIS_NAMES = tuple(_TERMS)

#: Hypotheses whose every evaluation is costly (``Term.expensive``: an N-body integration): fitted when asked.
SLOW_HYPOTHESES = tuple(name for name, term in _TERMS.items() if term.expensive)

#: What ``diagnose`` adds to the default comparison when the system file describes both stars of a binary:
#: the binaries' readings of a steady period change, and the quasi-periodic modulation (fitted by name
#: for a planet: ``--hypothesis quasi-periodic-modulation``).
BINARY_ADDITIONS = BINARY_HYPOTHESES + ("quasi-periodic-modulation",)

#: What ``compare`` fits by default: every fast hypothesis but :data:`BINARY_ADDITIONS`, and the sensible pairs.
DEFAULT_COMPARISON = tuple(n for n in HYPOTHESIS_NAMES if n not in SLOW_HYPOTHESES + BINARY_ADDITIONS) + (
    "orbital-decay+sinusoidal-modulation", "orbital-decay+light-travel-time")

_RESONANCE = re.compile(r"^near-resonant-perturber(?:\((?P<args>[^)]*)\))?$")


def _term(name: str) -> Term:
    name = name.strip()
    match = _RESONANCE.match(name)
    if match:
        kwargs = {}
        for item in filter(None, (a.strip() for a in (match["args"] or "").split(","))):
            if item == "inner":
                kwargs["inside"] = True
            elif item.startswith("j="):
                try:
                    kwargs["j"] = int(item[2:])
                except ValueError:
                    raise InputError(f"hypothesis {name!r}: j must be an integer") from None
            else:
                raise InputError(f"hypothesis {name!r}: unknown option {item!r} (use j=N, inner)")
        try:
            return NearResonantPerturber(**kwargs)
        except ValueError as exc:
            raise InputError(f"hypothesis {name!r}: {exc}") from None
    if name not in _TERMS:
        raise InputError(f"unknown hypothesis {name!r}; known: {', '.join(HYPOTHESIS_NAMES)} "
                         "(join compatible ones with '+')")
    return _TERMS[name]()


def get_hypothesis(name: str) -> Hypothesis:
    """The hypothesis called ``name`` (terms joined with ``+``).

    Examples
    --------
    >>> get_hypothesis("orbital-decay+sinusoidal-modulation").name
    'orbital-decay+sinusoidal-modulation'
    """
    terms = [_term(part) for part in str(name).split("+")]
    ephemerides = [t for t in terms if t.is_ephemeris]
    others = [t for t in terms if not t.is_ephemeris]
    if len(ephemerides) > 1:
        raise InputError(f"hypothesis {name!r} joins {len(ephemerides)} ephemeris terms "
                         f"({', '.join(t.key for t in ephemerides)}); use one of them")
    ephemeris = ephemerides[0] if ephemerides else ConstantPeriod()
    keys = [t.key for t in others]
    if len(set(keys)) != len(keys):
        raise InputError(f"hypothesis {name!r} repeats a term")
    return Hypothesis(ephemeris, others)
