"""Transit times from REBOUND (Rein & Liu 2012, A&A 537, A128; IAS15: Rein & Spiegel 2015, MNRAS
446, 1424), a general-purpose N-body library used here only as an outside reference.

The same initial barycentric state as ttvkit's engine (``nbody._setup``) is
integrated with IAS15; a transit is a change of g = x·vx + y·vy (planet
relative to the star, observer on +z) from − to + with the planet in front,
refined by the secant method on g from a copy of the simulation at the
start of the bracketing output interval, to 1e-9 d.
"""

import numpy as np

from ttvkit.physics import nbody


def _g(sim, j):
    s, p = sim.particles[0], sim.particles[j]
    return (p.x - s.x) * (p.vx - s.vx) + (p.y - s.y) * (p.vy - s.vy), p.z - s.z


def simulation(masses, x, u, integrator="ias15", dt=None):
    import rebound

    sim = rebound.Simulation()
    sim.G = nbody.GAUSS_G
    sim.integrator = integrator
    if dt is not None:
        sim.dt = dt
    for m, xi, ui in zip(masses, x, u):
        sim.add(m=m, x=xi[0], y=xi[1], z=xi[2], vx=ui[0], vy=ui[1], vz=ui[2])
    return sim


def _refine(sim, j, t_a, t_b):
    def g_at(t):
        c = sim.copy()
        c.integrate(t, exact_finish_time=1)
        return _g(c, j)[0]

    a, b = t_a, t_b
    ga, gb = g_at(a), g_at(b)
    for _ in range(60):
        t = b - gb * (b - a) / (gb - ga)
        gt = g_at(t)
        if abs(t - b) < 1e-9:
            return t
        a, ga, b, gb = b, gb, t, gt
    return b


def rebound_transit_times(masses, period, ecc, omega, inc, node, mean_anomaly, t_end, frame="heliocentric",
                          per_orbit=40):
    """Per planet, the transit times (days) of one system ([N+1] masses, [N] elements) from REBOUND."""
    m = np.asarray(masses, float)[None]
    els = [np.asarray(e, float)[None] for e in (period, ecc, omega, inc, node, mean_anomaly)]
    x, u = nbody._setup(m, *els, frame=frame)
    sim = simulation(m[0], x[0], u[0])
    n = m.shape[1] - 1
    h = float(np.min(period)) / per_orbit
    out = [[] for _ in range(n)]
    g_old = [_g(sim, j + 1)[0] for j in range(n)]
    t = 0.0
    while t < t_end:
        snap = sim.copy()
        sim.integrate(t + h, exact_finish_time=1)
        for j in range(n):
            g_new, z = _g(sim, j + 1)
            if g_old[j] < 0 <= g_new and z > 0:
                tt = _refine(snap, j + 1, t, t + h)
                if tt <= t_end:
                    out[j].append(tt)
            g_old[j] = g_new
        t += h
    return [np.array(o) for o in out]
