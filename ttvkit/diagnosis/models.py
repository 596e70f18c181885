"""The physical model behind each Term's checks: (title, assumptions), as the report states them."""

from __future__ import annotations

from ttvkit.hypotheses import (
    ApsidalPrecession,
    LightTravelTime,
    MagneticBraking,
    MassTransfer,
    NBodyPerturber,
    NearResonantPerturber,
    OrbitalDecay,
    QuasiPeriodicModulation,
    SinusoidalModulation,
)

__all__ = ["PHYSICAL_MODELS"]

#: The physical model behind each Term's checks: (title, assumptions), as the report states them.
PHYSICAL_MODELS = {
    MassTransfer: (
        "Mass transfer between the stars (conservative; e.g. Hilditch 2001, An Introduction to Close "
        "Binary Stars, CUP)",
        "Point masses on a circular orbit exchange mass at a constant rate with no loss of mass or angular "
        "momentum, so Ṗ/P = 3 Ṁ (1/M_donor − 1/M_accretor): the period grows when the lighter star gives "
        "mass. The donor must fill its Roche lobe (Eggleton 1983, ApJ 268, 368, volume-equivalent radius); "
        "a rate above the donor's thermal-timescale rate M/τ_KH is a tension (a short-lived phase), not an "
        "exclusion."),
    MagneticBraking: (
        "Magnetic braking (Rappaport, Verbunt & Joss 1983, ApJ 275, 713)",
        "A convective star spun in step with the orbit loses angular momentum in a magnetised wind at "
        "J̇ ∝ M R^γ ω³ (γ = 0–4); the tides take it from the orbit, so the period only shrinks. Point masses "
        "on a circular orbit; the stars' spins counted with their polytropes' moments of inertia. The law's "
        "calibration is uncertain by about an order of magnitude (from memory): a rate more than 10× "
        "outside its range is a tension, never an exclusion."),
    NBodyPerturber: (
        "Perturbing planet (N-body fit)",
        "The transiting planet and one more planet of fitted mass, period, eccentricity vector and mean "
        "longitude, integrated directly (the same corrected Wisdom–Holman map); coplanar, edge-on orbits "
        "of point masses; the transiting planet's eccentricity held at the System's; T0 and P are the "
        "mean ephemeris (the integration's straight line over the data is removed). The fit starts from "
        "the map's best points when the map is made, from near-resonant periods and from a coarse grid; "
        "another mode may exist elsewhere in period. Hill stability after Gladman (1993) for circular "
        "orbits."),
    SinusoidalModulation: (
        "Activity cycle (Applegate 1992)",
        "An activity cycle moves angular momentum between the star's interior and an outer shell; the "
        "shell's changed spin changes the star's quadrupole moment and so the orbital period. Core and "
        "shell rotate rigidly; the quadrupole follows the shell's spin at once; the modulation is "
        "sinusoidal; the whole luminosity is available over one cycle; the initial differential rotation "
        "equals its change. The spin is the star's own when its rotation period is known, synchronous "
        "otherwise. Thin shell: 0.1 M at the surface. Finite shell (in the manner of Völschow et al. "
        "2016): a Lane–Emden polytrope (n = 1.5 below 0.5 M☉, else 3) with the energy minimised over the "
        "shell thickness."),
    QuasiPeriodicModulation: (
        "Activity cycle that wanders (Applegate 1992, with a Gaussian-process O−C)",
        "The same Applegate budget as for a sinusoid, read at the Gaussian process's equivalent "
        "semi-amplitude √2 σ and its characteristic period (both with their posteriors): a cycle whose "
        "length and strength wander, modelled as a stochastically driven damped oscillator (celerite2's SHO "
        "covariance); stationary over the baseline."),
    OrbitalDecay: (
        "Tidal decay (Goldreich & Soter 1966; Patra et al. 2017)",
        "Constant-phase-lag tide raised on the star by a planet on a circular orbit; Q'_* constant; the "
        "planet's own tide neglected. Q'_* is compared with the values measured on real orbits (WASP-12: "
        "Maciejewski et al. 2016, A&A 588, L6; Yee et al. 2020, ApJL 888, L5; Turner et al. 2021, AJ 161, 72) "
        "and with population studies; outside that range it is unusual (a tension), never excluded, "
        "unless below the physical floor Q'_* ≥ 1."),
    ApsidalPrecession: (
        "Apsidal precession (Giménez & Bastero 1995)",
        "A slightly eccentric orbit to first order in e; a constant precession rate; the rate expected "
        "from general relativity and the tidal bulges (Ragozzine & Wolf 2009) with Love numbers k2 = 0.6 "
        "(planet) and 0.03 (star), uncertain by a factor of a few."),
    LightTravelTime: (
        "Distant companion (Irwin 1952)",
        "A Keplerian outer orbit of a point-mass pair; the light-travel time shifts all events alike. The "
        "companion would already have been seen if its RV change over the baseline exceeds 3× the RV "
        "scatter."),   # the 3× rule: common practice, no source (said in the docs, not the report)
    NearResonantPerturber: (
        "Near-resonant perturber (Lithwick, Xie & Wu 2012)",
        "Coplanar, nearly circular orbits near (not in) a first-order resonance; the quoted mass assumes "
        "zero free eccentricity (a free eccentricity trades against the mass). Hill stability after "
        "Gladman (1993) for circular orbits."),
}
