"""The shape every timing hypothesis shares.

A hypothesis is an **ephemeris term** (constant period, decaying period or
precessing orbit: where the mid-times would be) plus any number of
**additive terms** (a modulation, a light-travel-time orbit, a resonant
perturber: what shifts them).  Each term is one small class: it declares
its parameters (name, unit, bounds of the default uniform prior, starting
guesses from the data) and evaluates its contribution for arrays of
parameter values.  A term knows nothing of fitting, sampling or plotting.

Parameter vectors may carry leading dimensions (an ensemble of walkers):
``theta`` of shape ``(..., n_parameters)`` gives predictions of shape
``(..., n_points)``.  Times inside are days relative to the data's
reference time ``t_ref`` (BJD_TDB), so that least squares never differences
numbers of size 2.4 × 10⁶.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from dataclasses import dataclass, field

import numpy as np

from ttvkit._linear import weighted_line

__all__ = ["Parameter", "Derived", "TimingData", "HostContext", "Term", "Hypothesis", "TERMS"]

#: Every Term subclass with a ``key``, by key, in the order their modules define them
#: (filled by ``Term.__init_subclass__``: a new hypothesis registers itself).
TERMS: dict = {}

@dataclass(frozen=True)
class Parameter:
    """One fitted parameter.

    Attributes
    ----------
    name : str
        Name in the results (plain words of the trade).
    unit : str
        Unit shown to users.
    to_display : float
        Factor from the internal value to the shown unit.
    description : str
    periodic : float or None
        Period of a cyclic parameter (2π for an angle), else None.
    """

    name: str
    unit: str
    description: str
    to_display: float = 1.0
    periodic: float | None = None

    @property
    def symbol(self) -> str:
        """The parameter's symbol for figure axes (its name where it has none)."""
        return SYMBOLS.get(self.name, self.name)


#: Symbols for figure axes: a plot for a paper shows dP/dE, not dP_dE.
SYMBOLS = {"T0": "T₀", "P": "P", "dP_dE": "dP/dE", "light_time_amplitude": "A (light time)",
           "companion_period": "P₃", "sqrt_e_cos_omega": "√e cos ω", "sqrt_e_sin_omega": "√e sin ω",
           "mean_longitude0": "λ₀ (companion)", "sin_amplitude": "A cos φ", "cos_amplitude": "A sin φ",
           "modulation_period": "P (modulation)", "perturber_mass": "m′", "perturber_period": "P′",
           "perturber_ecosw": "e′ cos ω′", "perturber_esinw": "e′ sin ω′", "perturber_longitude": "λ′ − λ",
           "e_cos_omega0": "e cos ω₀", "e_sin_omega0": "e sin ω₀", "domega_dE": "dω/dE",
           "ttv_sin_amplitude": "TTV sine part", "ttv_cos_amplitude": "TTV cosine part",
           "ln_gp_amplitude": "ln σ (process, d)", "ln_characteristic_period": "ln ρ (d)",
           "ln_coherence_time": "ln τ (d)"}


@dataclass(frozen=True)
class Derived:
    """A derived quantity: sample values (display units), unit, description."""

    values: np.ndarray
    unit: str
    description: str


@dataclass(frozen=True)
class HostContext:
    """What some hypotheses need from the physical system: masses and the transiting orbit's shape.

    Internal units: solar masses and radians.  Build it with
    :meth:`from_system` from a :class:`~ttvkit.physics.System`; an empty
    context (no star mass) leaves mass-dependent derived quantities out.

    Attributes
    ----------
    star_mass : float or None
        M☉.
    companion_mass : float
        The transiting planet's (or secondary's) mass, M☉ (0 when unknown).
    eccentricity : float
        Of the transiting orbit (0 when unknown).
    omega : float or None
        Argument of periastron of the transiting orbit, rad.
    """

    star_mass: float | None = None
    companion_mass: float = 0.0
    eccentricity: float = 0.0
    omega: float | None = None

    @property
    def host_mass(self) -> float | None:
        """Star + companion, M☉ (None without the star's mass)."""
        return None if self.star_mass is None else self.star_mass + self.companion_mass

    @classmethod
    def from_system(cls, system) -> "HostContext":
        """The context of a :class:`~ttvkit.physics.System` (masses, e and ω of its orbit)."""
        import astropy.units as u

        mass = system.star.mass
        if mass is None:
            return cls()
        planet = system.companion.mass
        orbit = system.orbit
        return cls(star_mass=float(mass.to_value(u.Msun)),
                   companion_mass=float(planet.to_value(u.Msun)) if planet is not None else 0.0,
                   eccentricity=float(orbit.eccentricity or 0.0),
                   omega=float(orbit.omega.to_value(u.rad)) if orbit.omega is not None else None)

    @classmethod
    def coerce(cls, context) -> "HostContext":
        """A HostContext from None, a HostContext or anything with ``star``, ``companion`` and ``orbit``."""
        if context is None:
            return cls()
        if isinstance(context, cls):
            return context
        if all(hasattr(context, a) for a in ("star", "companion", "orbit")):
            return cls.from_system(context)
        raise TypeError(f"context must be a HostContext or a System, not {type(context).__name__}")


@dataclass
class TimingData:
    """The numbers a hypothesis needs, taken from a TimingTable.

    Attributes
    ----------
    epoch : ndarray of float
    phase : ndarray
        0 for transits and primary eclipses, 0.5 for occultations and
        secondary eclipses.
    secondary : ndarray of bool
        True for occultations and secondary eclipses.
    time : ndarray
        Mid-times minus ``t_ref`` (days).
    sigma : ndarray
        1σ uncertainties (days).
    t_ref : float
        BJD_TDB of the reference (the constant-period T0 guess).
    period : float
        Constant-period guess (days).
    host : HostContext
        Masses and orbit shape for mass-dependent derived quantities.
    perturber_seeds : tuple
        Extra starting points (period in days, mass in M⊕, longitude in
        rad) for a perturbing-planet fit, e.g. a perturber map's best points.
    source : ndarray of str, optional
        Where each mid-time comes from (a per-source excess-noise term
        reads it); None for epochs without data.
    """

    epoch: np.ndarray
    phase: np.ndarray
    secondary: np.ndarray
    time: np.ndarray
    sigma: np.ndarray
    t_ref: float
    period: float
    host: HostContext = field(default_factory=HostContext)
    perturber_seeds: tuple = ()
    source: np.ndarray | None = None

    @classmethod
    def from_table(cls, table, context=None, perturber_seeds=()) -> "TimingData":
        """Build from a :class:`~ttvkit.timing.table.TimingTable` (a weighted linear fit sets t_ref, P)."""
        from ttvkit.timing.ephemeris import KINDS

        epoch = table.epoch.astype(float)
        phase = np.array([KINDS[k] for k in table.kind])
        t_anchor = float(np.round(np.median(table.time), 1))
        line = weighted_line(epoch + phase, table.time - t_anchor, table.uncertainty)
        t_ref = t_anchor + line.intercept
        return cls(epoch, phase, phase > 0, table.time - t_ref, table.uncertainty.copy(), t_ref,
                   line.slope, HostContext.coerce(context), tuple(perturber_seeds), np.asarray(table.source))

    def at_epochs(self, epochs, phase=None) -> "TimingData":
        """The same reference and context at other epochs (no data): for predictions and figures."""
        epochs = np.asarray(epochs, float)
        phase = np.zeros(epochs.size) if phase is None else np.asarray(phase, float)
        return TimingData(epochs, phase, phase > 0, np.zeros(epochs.size), np.ones(epochs.size), self.t_ref,
                          self.period, self.host, self.perturber_seeds)

    @property
    def n(self) -> int:
        """Number of mid-times."""
        return int(self.time.size)

    def linear_residuals(self) -> np.ndarray:
        """Residuals (days) from the weighted constant-period fit."""
        x = self.epoch + self.phase
        return self.time - weighted_line(x, self.time, self.sigma)(x)

    @property
    def span(self) -> float:
        """Time covered by the data (days)."""
        return float(np.ptp(self.time)) if self.n > 1 else 0.0


class Term(ABC):
    """One part of a hypothesis: an ephemeris or an additive timing signal."""

    #: registry key of the term
    key: str = ""
    #: True for the ephemeris terms (exactly one per hypothesis, first)
    is_ephemeris: bool = False
    #: plain-language statement of the physical model and its assumptions
    assumptions: str = ""
    #: True when an evaluation is costly (an integration): fits then take
    #: the Jacobian's rows in one batched evaluation
    expensive: bool = False

    def __init_subclass__(cls, **kwargs):
        super().__init_subclass__(**kwargs)
        if cls.__dict__.get("key"):
            if cls.key in TERMS and TERMS[cls.key] is not cls:
                raise ValueError(f"two timing terms share the key {cls.key!r}")
            TERMS[cls.key] = cls

    @abstractmethod
    def parameters(self) -> tuple[Parameter, ...]:
        """The term's parameters, in order."""

    @abstractmethod
    def bounds(self, data: TimingData) -> tuple[np.ndarray, np.ndarray]:
        """Lower and upper bounds (internal units) of the default uniform prior."""

    @abstractmethod
    def guesses(self, data: TimingData, residuals: np.ndarray) -> list[np.ndarray]:
        """Starting values (internal units), best first; several for multi-start."""

    @abstractmethod
    def evaluate(self, p: dict, data: TimingData, base: dict) -> np.ndarray:
        """Contribution to the mid-times (days).

        ``p`` maps this term's parameter names to arrays of shape ``(..., 1)``;
        ``base`` holds the ephemeris parameters (``T0``, ``P``) likewise.
        """

    def derived(self, p: dict, data: TimingData) -> dict:
        """Derived quantities: name → :class:`Derived`, from parameter samples."""
        return {}

    def searched_frequencies(self, data: TimingData) -> float:
        """Width (cycles per day) of the frequency range over which this term's period is searched.

        A fit free to pick the best of many periods finds a noise peak
        somewhere; :func:`ttvkit.diagnosis.verdicts.look_elsewhere` charges
        for the span × width independent periods tried.  0 (the default):
        no period is searched.
        """
        return 0.0

    def validity(self, p: dict, data: TimingData) -> str | None:
        """Where this term's model holds: None inside its domain, else the reason in words.

        ``p`` maps this term's (and the ephemeris') parameter names to arrays
        of shape ``(1, 1)`` at the fitted values, as :meth:`derived` receives
        them.  The default: valid everywhere.
        """
        return None


class Hypothesis:
    """An ephemeris term plus additive terms: one explanation of the mid-times.

    Parameters
    ----------
    ephemeris : Term
        A term with ``is_ephemeris`` true.
    terms : sequence of Term
        Additive terms.
    name : str, optional
        Defaults to the term keys joined by ``+``.
    """

    def __init__(self, ephemeris: Term, terms=(), name: str | None = None):
        if not ephemeris.is_ephemeris:
            raise ValueError(f"{ephemeris.key} is not an ephemeris term")
        self.ephemeris = ephemeris
        self.terms = tuple(terms)
        keys = [ephemeris.key] + [t.key for t in self.terms]
        self.name = name or "+".join(k for k in keys if k != "constant-period") or "constant-period"
        self._slices = []
        start = 0
        for term in (self.ephemeris,) + self.terms:
            count = len(term.parameters())
            self._slices.append((term, slice(start, start + count)))
            start += count
        self.n_parameters = start

    def __repr__(self) -> str:
        return f"<Hypothesis {self.name}: {', '.join(p.name for p in self.parameters())}>"

    def parameters(self) -> tuple[Parameter, ...]:
        """All parameters, ephemeris first."""
        return tuple(p for term, _ in self._slices for p in term.parameters())

    @property
    def has_process(self) -> bool:
        """True when a term is a Gaussian process (its modulation is in the likelihood, not in predict)."""
        return any(getattr(t, "gaussian_process", False) for t, _ in self._slices)

    def process(self, theta) -> tuple[float, float, float]:
        """The Gaussian-process term's (σ, ρ, τ) in days at one parameter vector ``theta``."""
        for term, p in self.split(np.asarray(theta, float)[:self.n_parameters]):
            if getattr(term, "gaussian_process", False):
                return term.process(p)
        raise ValueError(f"{self.name} has no Gaussian-process term")

    @property
    def expensive(self) -> bool:
        """True if any term is costly to evaluate (see :attr:`Term.expensive`)."""
        return any(t.expensive for t, _ in self._slices)

    @property
    def assumptions(self) -> str:
        """The assumptions of every term, joined."""
        return " ".join(t.assumptions for t, _ in self._slices if t.assumptions)

    def split(self, theta) -> list[tuple[Term, dict]]:
        """Per term: a name → array mapping of its parameters (trailing axis kept)."""
        theta = np.asarray(theta, float)
        out = []
        for term, sl in self._slices:
            names = [p.name for p in term.parameters()]
            out.append((term, {n: theta[..., sl][..., i:i + 1] for i, n in enumerate(names)}))
        return out

    def predict(self, theta, data: TimingData) -> np.ndarray:
        """Predicted mid-times minus ``data.t_ref`` (days), shape ``(..., n)``."""
        parts = self.split(theta)
        base_term, base = parts[0]
        total = base_term.evaluate(base, data, base)
        for term, p in parts[1:]:
            total = total + term.evaluate(p, data, base)
        return total

    def bounds(self, data: TimingData) -> tuple[np.ndarray, np.ndarray]:
        """Bounds of the default uniform priors (internal units)."""
        lo, hi = zip(*(term.bounds(data) for term, _ in self._slices))
        return np.concatenate(lo), np.concatenate(hi)

    def starts(self, data: TimingData, limit: int = 60) -> list[np.ndarray]:
        """Starting vectors for multi-start optimisation (cartesian over term guesses)."""
        residuals = data.linear_residuals()
        options = [term.guesses(data, residuals) for term, _ in self._slices]
        starts = [np.concatenate(c) for c in _bounded_product(options, limit)]
        lo, hi = self.bounds(data)
        span = hi - lo
        return [np.clip(s, lo + 1e-9 * span, hi - 1e-9 * span) for s in starts]

    def validity(self, theta, data: TimingData) -> list[str]:
        """Reasons (one per term) why the fitted ``theta`` lies outside a term's validity domain."""
        parts = self.split(np.atleast_2d(np.asarray(theta, float)[..., :self.n_parameters])[:1])
        base = parts[0][1]
        reasons = []
        for term, p in parts:
            merged = dict(base)
            merged.update(p)
            reason = term.validity(merged, data)
            if reason:
                reasons.append(reason)
        return reasons

    def derived(self, theta, data: TimingData) -> dict:
        """Derived quantities of every term from parameter samples ``(..., n_parameters)``."""
        out = {}
        parts = self.split(theta)
        base = parts[0][1]
        for term, p in parts:
            merged = dict(base)
            merged.update(p)
            out.update(term.derived(merged, data))
        return out


def _bounded_product(options, limit):
    """Cartesian product of option lists, best-first, at most ``limit`` items."""
    import itertools

    combos = sorted(itertools.product(*[range(len(o)) for o in options]), key=lambda c: (sum(c), c))
    return [[options[i][k] for i, k in enumerate(c)] for c in combos[:limit]]
