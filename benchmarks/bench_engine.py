"""Live-loop cost of the visibility engine on the standard case.

Standard case: a star and 3 rings; 20 000 V² points over 150 wavelengths (1.5–13 µm,
baselines 10–130 m) and 6 000 closure triangles. Reports, in one run:
  * median time to re-evaluate all observables after changing one ring's T_in,
  * the same after an inclination change (geometry tier), and a PA change,
  * a brute-force reference (one Bessel function per point per radial node, written
    here, not the engine) and its accuracy against the engine,
  * the floor: the bare matrix product and the Planck evaluation a T_in change cannot avoid,
  * the same ring change with the channel bandpass on (every channel a top-hat of width
    λ/30, as low-resolution near-infrared and N-band channels are; sub-channel quadrature),
    beside the monochromatic one;
  * the equilibrium case: the same rings with temperature_mode="equilibrium", the rim of
    olivine glass and iron following its sublimation front, the other two with crystalline
    forsterite added (pure forsterite barely absorbs starlight in this optically thin model
    and would survive down to ~3 R★, so the rim holds none): slider changes of Σ_in, of a
    mass fraction, of a sublimation temperature and of the star's luminosity (every
    species of every ring re-solved and every ring's transform redone), beside the
    power-law ring change.
Run: .venv/bin/python benchmarks/bench_engine.py
BLAS runs single-threaded here (as in the app): on 2 shared cores a threaded BLAS makes
these small products slower and erratic.
"""
import math
import os
import statistics
import time

# Before numpy loads its BLAS: one thread (see the docstring).
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")

import numpy as np  # noqa: E402
from scipy import special  # noqa: E402

import diskexplorer.dust  # noqa: E402,F401  (species names as dust)
from diskexplorer import PowerLawOpacity, Ring, Scene, Star
from diskexplorer.dust import DustMix
from diskexplorer.observables import Observer
from diskexplorer.observables.quadrature import radial_nodes
from diskexplorer.physics.constants import ARCSEC_RAD, RAD_PER_MAS
from diskexplorer.physics.planck import planck_nu


def standard_case(seed=1):
    rng = np.random.default_rng(seed)
    wl = np.concatenate([np.linspace(1.5, 2.5, 20), np.linspace(2.9, 5.0, 70), np.linspace(8.0, 13.0, 60)])
    n_vis, n_t3 = 20000, 6000
    b = rng.uniform(10.0, 130.0, n_vis)
    a = rng.uniform(0, 2 * np.pi, n_vis)
    vis = (b * np.sin(a), b * np.cos(a), rng.choice(wl, n_vis))
    b1, a1 = rng.uniform(10, 90, n_t3), rng.uniform(0, 2 * np.pi, n_t3)
    b2, a2 = rng.uniform(10, 90, n_t3), rng.uniform(0, 2 * np.pi, n_t3)
    t3 = (b1 * np.sin(a1), b1 * np.cos(a1), b2 * np.sin(a2), b2 * np.cos(a2), rng.choice(wl, n_t3))
    dust = PowerLawOpacity(kappa_ref=2500.0, wavelength_ref=10.0, beta=1.2)
    scene = Scene(distance=140.0, star=Star(t_eff=7500.0, radius=2.2),
                  rings=[Ring(r_in=0.3, r_out=0.6, t_in=1500.0, q=0.5, sigma_in=1e-2, dust=dust, name="rim"),
                         Ring(r_in=0.8, r_out=2.0, t_in=900.0, q=0.6, sigma_in=3e-3, dust=dust, name="mid"),
                         Ring(r_in=4.0, r_out=8.0, t_in=300.0, q=0.5, sigma_in=1e-2, dust=dust,
                              c1=0.3, s1=0.1, name="outer")],
                  inclination=45.0, position_angle=30.0)
    return scene, vis, t3, wl


def equilibrium_case(scene):
    """The standard scene with every ring in equilibrium with a three-species mixture."""
    rim = DustMix({"olivine_glass": 0.7, "iron": 0.3}, grain_size=0.1)
    mix = DustMix({"olivine_glass": 0.6, "iron": 0.2, "forsterite": 0.2}, grain_size=0.1)
    rings = [r.__class__(**{**{f: getattr(r, f) for f in ("r_in", "r_out", "sigma_in", "p", "c1", "s1", "name")},
                            "dust": rim if k == 0 else mix, "temperature_mode": "equilibrium",
                            "inner_edge": "sublimation" if k == 0 else "fixed"})
             for k, r in enumerate(scene.rings)]
    return scene.replace(rings=rings)


ROUNDS, REPEAT, WARMUP = 5, 100, 10


def median_ms(fn, repeat=REPEAT, warmup=WARMUP):
    """Median wall time in ms of fn(k), k = 0 … repeat − 1, after ``warmup`` calls."""
    return side_by_side({"fn": fn}, repeat, warmup)["fn"]


def side_by_side(fns, repeat=REPEAT, warmup=WARMUP, offset=0):
    """Median ms of each of ``fns`` (name -> fn(k)), called in turn, the order rotating per k."""
    names = list(fns)
    times = {name: [] for name in names}
    for k in range(warmup + repeat):
        for j in range(len(names)):
            name = names[(k + j) % len(names)]
            t0 = time.perf_counter()
            fns[name](offset + k)
            if k >= warmup:
                times[name].append(time.perf_counter() - t0)
    return {name: 1e3 * statistics.median(t) for name, t in times.items()}


def brute_force(scene, u, v, wl):
    """One Bessel function per point per radial node, on the engine's own nodes (equal accuracy)."""
    pa, cos_i = math.radians(scene.position_angle), math.cos(math.radians(scene.inclination))
    lam = wl * 1e-6
    a = (u * math.sin(pa) + v * math.cos(pa)) / lam
    c = (u * math.cos(pa) - v * math.sin(pa)) * cos_i / lam
    rho, psi = np.hypot(a, c), np.arctan2(c, a)
    rho_max = rho.max() * 1.0001
    rad_per_au = ARCSEC_RAD / scene.distance
    num = np.zeros(u.size, complex)
    tot = np.zeros(u.size)
    for ring in scene.rings:
        r, theta, area = radial_nodes(ring.r_in, ring.r_out, rad_per_au, np.hypot(u, v).max() / lam.min(), 1)
        inten = ring.intensity(r, wl, scene.inclination) * cos_i * area      # (n, K): per point
        arg = 2 * np.pi * rho[:, None] * theta[None, :]
        num += (inten * special.j0(arg)).sum(1)
        if ring.is_modulated:
            num += -1j * (ring.c1 * np.cos(psi) + ring.s1 * np.sin(psi)) * (inten * special.j1(arg)).sum(1)
        tot += inten.sum(1)
    fs = scene.star.flux(wl, scene.distance)
    x = math.pi * scene.star.angular_diameter(scene.distance) * RAD_PER_MAS * np.hypot(u, v) / lam
    num += fs * 2 * special.j1(x) / x
    return num / (tot + fs)


def direct_eq(scene, sampling):
    """The engine's reference transform (one Bessel function per point per node)."""
    from diskexplorer.observables.engine import direct_visibility
    return direct_visibility(scene, sampling.u, sampling.v, sampling.wavelength, accuracy=1)


def main():
    scene, (u, v, wl), (u1, v1, u2, v2, wl3), waves = standard_case()
    obs = Observer(u, v, wl, u1, v1, u2, v2, wl3, sed_wavelength=np.geomspace(0.4, 30, 40))
    t0 = time.perf_counter()
    first = obs.observe(scene)
    cold = time.perf_counter() - t0
    n_points = obs.interferometric.sampling.size
    ev = obs.interferometric

    # floor: the product and the Planck table of the changed ring, nothing else
    ring = scene.rings[0]
    grid = ev._grid(scene)
    kernel = ev._kernel(ring, scene.distance, grid, 0)
    r_nodes = ev._ring_nodes(ring, scene.distance)[0]
    lam_u = ev.sampling.wavelengths
    temps = 1400.0 + 0.01 * np.arange(ROUNDS * (REPEAT + WARMUP) + 1)

    def floor_product(k):
        b = planck_nu(lam_u[:, None], (temps[k] * (r_nodes / ring.r_in) ** -ring.q)[None, :])
        return b @ kernel

    # Any model must also deliver one value per data point: add the cheapest such pass
    # (one gather of the transform at every point, and |V|² of the V² points).
    gather = (ev.sampling.wave_index * kernel.shape[1]
              + np.minimum((ev.sampling.rho_full / grid[0]).astype(int) + 1, kernel.shape[1] - 1))

    def floor(k):
        h = floor_product(k).ravel()[gather]
        return h[:obs.n_vis] ** 2

    def ring_change(k):
        obs.observe(scene.with_ring(0, t_in=float(temps[k])))

    # The ring change and its floors run side by side, in turn, so that all three see
    # the same state of this shared machine (measured here: the same ring change took
    # 0.65 ms and, an hour later, 1.4 ms); each round gives one set of medians and one ratio.
    rounds = [side_by_side({"ring": ring_change, "bare": floor_product, "floor": floor},
                           offset=r * (REPEAT + WARMUP)) for r in range(ROUNDS)]
    t_ring = statistics.median(r["ring"] for r in rounds)
    t_floor_product = statistics.median(r["bare"] for r in rounds)
    t_floor = statistics.median(r["floor"] for r in rounds)
    bare_ratios = [r["ring"] / r["bare"] for r in rounds]
    floor_ratios = [r["ring"] / r["floor"] for r in rounds]

    # Bandpass on: the same data with every channel λ/30 wide (6 Gauss–Legendre nodes each).
    banded = Observer(u, v, wl, u1, v1, u2, v2, wl3, sed_wavelength=np.geomspace(0.4, 30, 40),
                      bandwidth=wl / 30.0, t3_bandwidth=wl3 / 30.0,
                      sed_bandwidth=np.geomspace(0.4, 30, 40) / 30.0)
    t0 = time.perf_counter()
    banded.observe(scene)
    cold_band = time.perf_counter() - t0

    def ring_change_band(k):
        banded.observe(scene.with_ring(0, t_in=float(temps[k])))

    band_rounds = [side_by_side({"mono": ring_change, "band": ring_change_band},
                                offset=r * (REPEAT + WARMUP)) for r in range(ROUNDS)]
    t_mono_pair = statistics.median(r["mono"] for r in band_rounds)
    t_band = statistics.median(r["band"] for r in band_rounds)
    band_ratios = [r["band"] / r["mono"] for r in band_rounds]

    # Equilibrium rings: the same observer, slider changes of the kinds the app makes.
    eq_scene = equilibrium_case(scene)
    t0 = time.perf_counter()
    obs.observe(eq_scene)
    cold_eq = time.perf_counter() - t0
    sigmas = 1e-2 * (1.0 + 1e-4 * np.arange(ROUNDS * (REPEAT + WARMUP) + 1))
    fracs = 0.7 + 1e-4 * np.arange(ROUNDS * (REPEAT + WARMUP) + 1)
    t_subs = 1800.0 + 0.01 * np.arange(ROUNDS * (REPEAT + WARMUP) + 1)
    lums = eq_scene.star.luminosity * (1.0 + 1e-5 * np.arange(ROUNDS * (REPEAT + WARMUP) + 1))

    def eq_sigma(k):
        obs.observe(eq_scene.with_ring(0, sigma_in=float(sigmas[k])))

    def eq_fraction(k):
        f = float(fracs[k])
        obs.observe(eq_scene.with_ring(0, dust=DustMix({"olivine_glass": f, "iron": 1.0 - f}, grain_size=0.1)))

    def eq_sublimation(k):
        obs.observe(eq_scene.with_ring(0, sublimation={"iron": float(t_subs[k])}))

    def eq_star(k):
        obs.observe(eq_scene.replace(star=Star(t_eff=eq_scene.star.t_eff, luminosity=float(lums[k]))))

    eq_rounds = [side_by_side({"power law": ring_change, "Σ_in": eq_sigma, "fraction": eq_fraction,
                               "T_sub": eq_sublimation, "L★": eq_star}, offset=r * (REPEAT + WARMUP))
                 for r in range(ROUNDS)]
    t_eq = {name: statistics.median(r[name] for r in eq_rounds) for name in eq_rounds[0]}
    eq_err = np.max(np.abs(ev.evaluate(eq_scene).vis - direct_eq(eq_scene, ev.sampling)))

    incs = 40.0 + 0.05 * np.arange(REPEAT + WARMUP)
    t_inc = median_ms(lambda k: obs.observe(scene.replace(inclination=float(incs[k]))))
    pas = 20.0 + 0.05 * np.arange(REPEAT + WARMUP)
    t_pa = median_ms(lambda k: obs.observe(scene.replace(position_angle=float(pas[k]))))

    # brute force over all points of the sampling (V² points and the three baselines per triangle)
    s = ev.sampling
    t0 = time.perf_counter()
    ref = brute_force(scene, s.u, s.v, s.wavelength)
    t_brute = 1e3 * (time.perf_counter() - t0)
    fast = ev.evaluate(scene).vis
    err = np.max(np.abs(fast - ref))

    print(f"standard case: {obs.n_vis} V² points, {obs.n_t3} triangles, {waves.size} wavelengths "
          f"-> {n_points} evaluated points; radial nodes per ring: "
          + ", ".join(str(ev._ring_nodes(r, scene.distance)[0].size) for r in scene.rings)
          + f"; frequency grid: {grid[1]} nodes")
    print(f"cold start (kernels, nodes, interpolation matrix): {1e3 * cold:8.1f} ms")
    print(f"ring change (T_in of one ring), all observables:   {t_ring:8.2f} ms  median of {ROUNDS} rounds")
    print(f"geometry change (inclination), all observables:    {t_inc:8.2f} ms  median")
    print(f"geometry change (position angle), all observables: {t_pa:8.2f} ms  median")
    print(f"floor, bare (Planck table + matrix product of one ring): {t_floor_product:8.2f} ms  median"
          f"  -> ring change / bare floor = {statistics.median(bare_ratios):.2f}"
          f"  (rounds: {' '.join(f'{x:.2f}' for x in bare_ratios)})")
    print(f"floor with output (+ one gather per data point, |V|²):   {t_floor:8.2f} ms  median"
          f"  -> ring change / floor = {statistics.median(floor_ratios):.2f}"
          f"  (rounds: {' '.join(f'{x:.2f}' for x in floor_ratios)})")
    print(f"brute force (Bessel per point per node):           {t_brute:8.1f} ms"
          f"  -> speed-up over brute force = {t_brute / t_ring:.0f}x (ring change)")
    print(f"accuracy: max |V_engine - V_brute| = {err:.2e}")
    print(f"bandpass on (channels λ/30, {banded.interferometric.node_count:.0f} nodes each -> "
          f"{banded.interferometric.inner.sampling.size} sub-points): cold start {1e3 * cold_band:8.1f} ms")
    print(f"ring change, monochromatic / bandpass on:          {t_mono_pair:8.2f} ms / {t_band:8.2f} ms  median"
          f"  -> ratio {statistics.median(band_ratios):.1f}"
          f"  (rounds: {' '.join(f'{x:.1f}' for x in band_ratios)})")
    front = eq_scene.rings[0].resolved(eq_scene.star).r_in
    print(f"equilibrium rings (2, 3, 3 species; inner edge of the rim at its sublimation front {front:.3f} au): "
          f"cold start {1e3 * cold_eq:8.1f} ms; accuracy against the direct transform {eq_err:.2e}")
    print("  slider change, all observables (median of rounds): "
          + ", ".join(f"{name} {t:.2f} ms" for name, t in t_eq.items()))


if __name__ == "__main__":
    main()
