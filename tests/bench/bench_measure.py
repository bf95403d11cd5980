"""Benchmark of the measurements: RV precision against the photon-noise limit, class
recovery over the template grid, and time per 200,000-sample spectrum.

Prints figures only; never fails on them.  Run: .venv/bin/python tests/bench/bench_measure.py

References
----------
Bouchy, Pepe & Queloz (2001), A&A 374, 733 (photon-noise limit of a radial velocity);
Pecaut & Mamajek (2013), ApJS 208, 9 (Teff per class of the templates).
"""

from __future__ import annotations

import importlib.util
import math
import sys
import time
import warnings
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from atlas.lines import load_lines  # noqa: E402
from atlas.measure import rv as rvmod  # noqa: E402
from atlas.measure.classify import class_number, classify  # noqa: E402
from atlas.measure.identify import identify_spectrum  # noqa: E402

_spec = importlib.util.spec_from_file_location("synth", ROOT / "tests/measure/_synthetic.py")
S = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(S)

DEPTH_OF_STRENGTH = {1: 0.7, 2: 0.45, 3: 0.25, 4: 0.12}
C = rvmod.C_KMS


def stellar_lines(lines, lo, hi):
    a = lines[(lines.kind == "atomic") & ~lines.telluric.astype(str).eq("True")]
    a = a[(a.vacuum_A > lo) & (a.vacuum_A < hi)]
    return a.vacuum_A.to_numpy(), np.array([DEPTH_OF_STRENGTH[int(s)] for s in a.strength])


def bench_rv(lines, n_real=200, n_samples=40_000, snr=100.0, rv_true=23.4, sigma_kms=4.0):
    rest, depth = stellar_lines(lines, 4400.0, 6800.0)
    wave = S.log_grid(4500.0, 6700.0, n_samples)
    rng = np.random.default_rng(2026)
    got, errs = [], []
    _, sigma, model = S.make_star(wave, rest, depth, rv_kms=rv_true, sigma_kms=sigma_kms, snr=snr,
                                  rng=0)
    limit_fd = rvmod.photon_limit_kms(wave, model, sigma)
    # the same limit with the exact derivative of the noise-free model (the lines are
    # Gaussians of 1.3 pixels sigma here, where finite differences underestimate slopes)
    _, dt = rvmod.template_depth(wave, rest, depth, sigma_kms, rv_true)
    limit = float(C / math.sqrt(np.sum(dt**2 / sigma**2)))
    t0 = time.perf_counter()
    for _ in range(n_real):
        flux = model + rng.normal(size=wave.size) * sigma
        r = rvmod.measure_rv(wave, flux, sigma, line_wave_A=rest)
        got.append(r.rv_obs_kms)
        errs.append(r.rv_err_kms)
    dt = (time.perf_counter() - t0) / n_real
    got = np.array(got, dtype=float)
    scatter = float(np.std(got, ddof=1))
    bias = float(np.mean(got) - rv_true)
    print(f"RV: {n_real} noise realisations, {n_samples} samples, S/N {snr:g}, "
          f"{rest.size} list lines, Gaussian lines sigma {sigma_kms} km/s, RV {rv_true} km/s")
    print(f"  scatter {scatter * 1000:.2f} m/s; photon-noise limit (Bouchy+ 2001) {limit * 1000:.2f} m/s;"
          f" ratio {scatter / limit:.3f} (target <= 1.2)")
    print(f"  (limit from finite differences of the sampled model: {limit_fd * 1000:.2f} m/s,"
          f" ratio {scatter / limit_fd:.3f})")
    print(f"  bias {bias * 1000:+.2f} m/s = {bias / scatter:+.3f} sigma (target |bias| <= 0.2 sigma;"
          f" standard error of the mean {1 / math.sqrt(n_real):.3f} sigma)")
    print(f"  median reported error {np.median(errs) * 1000:.2f} m/s = {np.median(errs) / scatter:.3f}"
          f" x scatter; {dt * 1000:.0f} ms per spectrum")


def bench_class(n_per_class=4, snr=50.0, r_obs=20000.0):
    from atlas.synth.templates import CLASSES, template_grid

    wave = np.exp(np.linspace(math.log(4300.0), math.log(6900.0), 30_000))
    grid = template_grid(wave, R=r_obs)
    rng = np.random.default_rng(7)
    exact = near = total = 0
    misses = []
    t0 = time.perf_counter()
    for name in CLASSES:
        flux = grid["flux"].sel({"class": name}).values
        for _ in range(n_per_class):
            v = float(rng.uniform(-250.0, 250.0))
            fac = math.sqrt((1 + v / C) / (1 - v / C))
            cont = S.planck_lambda(wave * fac, 6000.0)
            cont /= np.median(cont)
            obs = cont * flux + rng.normal(size=wave.size) * cont / snr
            # the star's own RV and line width first, as in `striae measure`
            rest, _ = rvmod.line_mask(load_lines(), "vacuum")
            r = rvmod.measure_rv(wave * fac, obs, cont / snr, line_wave_A=rest)
            v_obs = r.rv_obs_kms if r.rv_obs_kms is not None else 0.0
            res = classify(wave * fac, obs, cont / snr, rv_obs_kms=v_obs,
                           line_fwhm_kms=C / r_obs)
            total += 1
            got = res.spectral_class
            if got and got[0] == name[0]:
                exact += 1
            if got and abs(class_number(got) - class_number(name)) <= 2:
                near += 1
            else:
                misses.append(f"{name}->{got}")
    dt = (time.perf_counter() - t0) / total
    print(f"Class: {len(CLASSES)} template classes x {n_per_class} draws, S/N {snr:g}, "
          f"RV -250..+250 km/s, Planck 6000 K slope on top, R {r_obs:g}")
    print(f"  right letter {exact / total:.3f}; within 2 subclasses {near / total:.3f};"
          f" {dt:.2f} s per star (RV + class)")
    if misses:
        print("  misses: " + ", ".join(misses))


def bench_speed(lines, n=200_000):
    rest, depth = stellar_lines(lines, 3700.0, 9100.0)
    wave = S.log_grid(3800.0, 9000.0, n)
    flux, sigma, _ = S.make_star(wave, rest, depth, rv_kms=-120.0, snr=80, teff_k=5500.0, rng=3)
    lw, wt = rvmod.line_mask(lines, "vacuum")
    t0 = time.perf_counter()
    r = rvmod.measure_rv(wave, flux, sigma, line_wave_A=lw, line_weight=wt)
    t1 = time.perf_counter()
    ident, unid = identify_spectrum(wave, flux, lines, rv_obs_kms=r.rv_obs_kms,
                                    rv_err_kms=r.rv_err_kms, line_fwhm_kms=r.line_fwhm_kms,
                                    uncertainty=sigma, medium="vacuum")
    t2 = time.perf_counter()
    c = classify(wave, flux, sigma, rv_obs_kms=r.rv_obs_kms, line_fwhm_kms=r.line_fwhm_kms)
    t3 = time.perf_counter()
    c2 = classify(wave, flux, sigma, rv_obs_kms=r.rv_obs_kms, line_fwhm_kms=r.line_fwhm_kms)
    t4 = time.perf_counter()
    print(f"Speed, one {n}-sample spectrum (3800-9000 Å): RV {t1 - t0:.2f} s "
          f"({r.rv_obs_kms:+.3f} ± {r.rv_err_kms:.3f} km/s, true -120); "
          f"line identification {t2 - t1:.2f} s ({len(ident)} identified, {len(unid)} unexplained); "
          f"class {t3 - t2:.2f} s with template synthesis, {t4 - t3:.2f} s with cached templates "
          f"({c.spectral_class}, {c2.spectral_class})")


def bench_hot(lines, n_real=12, snr=100.0):
    """Template-fit velocities of hot, fast-rotating atlas.synth stars over noise realisations."""
    from atlas.measure.velocity import rv_of_spectrum
    from atlas.spectrum import make_spectrum
    from atlas.synth.broaden import log_grid
    from atlas.synth.model import Star, synthesize

    wave = log_grid(3900.0, 6900.0, 3.0)
    print(f"Hot stars, template fit: {n_real} noise realisations each, S/N {snr:g}, R 40000, "
          f"3900-6900 Å, telluric lines at airmass 1.2")
    for teff, vsini, rv_true in ((36000.0, 110.0, -143.0), (30000.0, 200.0, 62.5),
                                 (16000.0, 160.0, -8.5), (14000.0, 120.0, 131.0)):
        syn = synthesize(wave, Star(teff_k=teff, logg=4.0, vsini_kms=vsini, rv_kms=rv_true),
                         resolving_power=40000, airmass=1.2)
        clean = syn.normalised * syn.continuum
        rng = np.random.default_rng(int(teff))
        got, errs, methods = [], [], set()
        t0 = time.perf_counter()
        for _ in range(n_real):
            flux = clean + rng.normal(size=clean.size) * clean / snr
            ds = make_spectrum(wave, flux, clean / snr, medium="vacuum", resolving_power=40000.0)
            r = rv_of_spectrum(ds, lines)
            if r.rv_obs_kms is not None:
                got.append(r.rv_obs_kms)
                errs.append(r.rv_err_kms)
                methods.add(r.method)
        dt = (time.perf_counter() - t0) / n_real
        got, errs = np.array(got), np.array(errs)
        z = (got - rv_true) / errs
        print(f"  Teff {teff:5.0f} K, v sin i {vsini:3.0f} km/s, RV {rv_true:+6.1f}: {got.size}/{n_real} measured"
              f" ({', '.join(sorted(methods))}); bias {got.mean() - rv_true:+.2f} km/s, scatter"
              f" {got.std(ddof=1):.2f} km/s, median reported error {np.median(errs):.2f} km/s,"
              f" rms of (rv - true)/error {np.sqrt(np.mean(z**2)):.2f} (target ~1, error < 5 km/s);"
              f" {dt:.1f} s per spectrum")


def _measured(ds):
    """RV and class as the build measures them (atlas.measure.report.measure_spectrum: the one
    pipeline; echelle orders through the joint blaze fit and the blaze-weighted merge)."""
    from atlas.measure.report import measure_spectrum

    return measure_spectrum(ds, with_lines=False)


def bench_confusion(n_stars=48, seed=11):
    """Class and RV over a sampled grid O5-M5 x v sin i 0-300 x S/N 30-200 x with/without blaze."""
    from atlas.measure.classify import class_name
    from atlas.spectrum import make_spectrum
    from atlas.synth import demo
    from atlas.synth.model import Star, synthesize
    from atlas.synth.templates import subclass_teff_k

    rng = np.random.default_rng(seed)
    numbers = np.arange(5, 66)
    step, n_pix, R = 4.0, 1024, 20000.0
    orders, centres = demo.echelle_orders(3900.0, 7000.0)
    idx = np.arange(n_pix) - (n_pix - 1) / 2.0
    w2 = centres[:, None] * np.exp(idx[None, :] * math.log1p(step / C))
    blaze = np.stack([demo.blaze(w2[i], centres[i], orders[i]) for i in range(len(orders))])
    w1 = S.log_grid(3900.0, 7000.0, int(math.log(7000.0 / 3900.0) * C / step))
    rows = []
    t0 = time.perf_counter()
    for i in range(n_stars):
        num = int(rng.choice(numbers))
        vsini = float(rng.choice([2.0, 50.0, 100.0, 200.0, 300.0]))
        snr = float(rng.choice([30.0, 60.0, 100.0, 200.0]))
        echelle = bool(i % 2)
        rv = float(rng.uniform(-150.0, 150.0))
        star = Star(teff_k=subclass_teff_k(num), logg=4.3, vsini_kms=vsini, rv_kms=rv)
        wave = w2 if echelle else w1
        syn = synthesize(wave, star, resolving_power=R, medium="vacuum", airmass=1.2)
        # photon counts: S/N `snr` in the median continuum (at the blaze peak for orders)
        clean = syn.normalised * syn.continuum / np.median(syn.continuum) * snr**2
        if echelle:
            clean = clean * (blaze + 1e-4)
        sig = np.sqrt(np.maximum(clean, 1.0))
        flux = clean + rng.normal(size=clean.shape) * sig
        ds = make_spectrum(wave, flux, sig, medium="vacuum", resolving_power=R)
        try:
            v = _measured(ds)
        except Exception as exc:  # a crash is a miss here, reported
            v = {"spectral_class": None, "rv_obs_kms": None, "rv_err_kms": None, "class_range": repr(exc)[:40]}
        rows.append((num, vsini, snr, echelle, v.get("spectral_class"), v.get("class_range"),
                     v.get("rv_obs_kms"), v.get("rv_err_kms"), rv))
    dt = (time.perf_counter() - t0) / n_stars
    print(f"Class and RV confusion: {n_stars} stars sampled from O5-M5 x v sin i 2-300 km/s x S/N 30-200 x"
          f" (with, without) an echelle blaze; R {R:g}, 3900-7000 Å, {step:g} km/s pixels; {dt:.1f} s per star")
    print("  letter  stars  within 1 subclass  uncertain  (target share >= 0.9)   rms (rv - true)/error"
          " (target 0.8-1.2)")
    for letter in "OBAFGKM":
        sel = [r for r in rows if class_name(r[0])[0] == letter]
        if not sel:
            continue
        ok = sum(1 for r in sel if r[4] and abs(class_number(r[4]) - r[0]) <= 1)
        unc = sum(1 for r in sel if r[5] == "uncertain")
        z = [(r[6] - r[8]) / r[7] for r in sel if r[6] is not None and r[7]]
        rms = f"{math.sqrt(np.mean(np.square(z))):.2f} (n {len(z)})" if z else "-"
        print(f"  {letter}       {len(sel):5d}  {ok / len(sel):17.2f}  {unc:9d}                           {rms}")
    for blz in (False, True):
        sel = [r for r in rows if r[3] == blz]
        ok = sum(1 for r in sel if r[4] and abs(class_number(r[4]) - r[0]) <= 1)
        print(f"  {'with' if blz else 'without'} blaze: within 1 subclass {ok / max(len(sel), 1):.2f} of {len(sel)}")
    print("  confusion (true -> got): " + ", ".join(
        f"{class_name(r[0])}/{r[1]:.0f}/{r[2]:.0f}{'/e' if r[3] else ''}->{r[4] or r[5]}" for r in rows
        if not (r[4] and abs(class_number(r[4]) - r[0]) <= 1)))


def main():
    warnings.simplefilter("ignore")
    lines = load_lines()
    t0 = time.perf_counter()
    bench_speed(lines)
    bench_rv(lines)
    bench_class()
    bench_hot(lines)
    bench_confusion()
    print(f"bench_measure total {time.perf_counter() - t0:.0f} s")


if __name__ == "__main__":
    main()
