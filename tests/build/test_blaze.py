"""Echelle continua fitted jointly (atlas.blaze) and orders merged by their blaze (atlas.merge_orders)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from atlas.blaze import fit_orders
from atlas.build import BuildOptions, prepare
from atlas.continuum import fit_continuum
from atlas.merge_orders import merge_orders

from ._data import C_KMS

DEMO = Path(__file__).resolve().parents[2] / "demo_spectra"


def _sinc2_orders(n_orders=12, n=2048, centre0=4000.0, k_A=5.9e5, step_kms=2.0):
    """Orders of an invented echelle: wavelengths and the grating blaze sinc^2(m (l - lc) / l)
    (the blaze function, common practice), centres m * lc = k_A."""
    m0 = round(k_A / centre0)
    ms = np.arange(m0, m0 - n_orders, -1)
    centres = k_A / ms
    idx = np.arange(n) - (n - 1) / 2
    wave = centres[:, None] * np.exp(idx[None, :] * step_kms / C_KMS)
    blaze = np.sinc(ms[:, None] * (wave - centres[:, None]) / wave) ** 2
    return wave, blaze


def test_an_order_filled_by_a_broad_line_borrows_its_continuum_from_its_neighbours():
    # Invented: a smooth continuum, a line 45 % deep and 35 Å wide (FWHM), about the
    # width of the order's bright part (a Balmer line of a B dwarf, from memory), and
    # photon noise at S/N 300 at the blaze peak.
    rng = np.random.default_rng(3)
    wave, blaze = _sinc2_orders()
    star = 1.0 + 0.3 * (wave - 4000.0) / 1000.0
    centre = wave[5, 1024]
    line = 1.0 - 0.45 * np.exp(-0.5 * ((wave - centre) / 15.0) ** 2)
    truth = 9.0e4 * star * blaze
    flux = rng.poisson(truth * line).astype(float)
    joint = fit_orders([(wave[o], flux[o], None) for o in range(wave.shape[0])])
    strong = blaze[5] > 0.2  # where the order holds most of its light
    err_joint = np.abs(joint[5][strong] / truth[5][strong] - 1)
    assert np.max(err_joint) < 0.02, np.max(err_joint)
    # an order fitted on its own cannot tell the line from its blaze (this is the failure fixed)
    alone = fit_continuum(wave[5], flux[5], segments=[(0, wave.shape[1])])
    assert np.max(np.abs(alone[strong] / truth[5][strong] - 1)) > 0.1


def test_demo_echelle_star_is_normalised_within_3_percent_in_line_free_regions_of_every_order():
    from atlas.io import read
    from atlas.synth import demo
    from atlas.synth.model import Star, synthesize

    path = DEMO / "corrans_star_echelle.fits"
    ds = read(path)
    obs = next(o for o in demo.OBSERVATIONS if o.file == path.name)
    # Line-free samples: the noise-free model of the star at its README parameters,
    # made from the model's input line list (the one the file was made from), is within
    # 0.5 % of its continuum there (lines and telluric bands both counted).
    star = Star(teff_k=obs.teff_k, logg=obs.logg, vsini_kms=obs.vsini_kms, rv_kms=obs.rv_kms)
    model = synthesize(ds["wavelength"].values, star, resolving_power=obs.resolving_power, medium=obs.medium,
                       barycentric_kms=demo.barycentric_kms(obs), airmass=obs.airmass).normalised
    seq, plan, _ = prepare(ds, BuildOptions())
    assert plan.mode == "orders"
    n_o, n = ds["flux"].shape
    norm = (seq["flux"] / seq["continuum"]).reshape(n_o, n)
    sig = (seq["uncertainty"] / seq["continuum"]).reshape(n_o, n)
    checked = 0
    for o in range(n_o):
        free = model[o] > 0.995
        for a in range(0, n, 64):  # medians of 64-sample pieces, where the noise allows 1 %
            s = free[a : a + 64]
            if s.sum() < 16:
                continue
            err = 1.2533 * np.sqrt(np.mean(sig[o, a : a + 64][s] ** 2) / s.sum())  # error of a median
            if err > 0.01:
                continue
            checked += 1
            dev = np.median(norm[o, a : a + 64][s]) - 1.0
            assert abs(dev) < 0.03, (o, a, dev)
    assert checked > 1000, checked


def test_a_merged_overlap_is_the_blaze_weighted_mean_and_no_sample_is_lost_or_doubled():
    rng = np.random.default_rng(8)
    grid = 5000.0 * np.exp(np.arange(3000) * 2.0 / C_KMS)
    spans = [(0, 1400), (1000, 2300), (2000, 3000)]  # overlaps of 400 and 300 samples
    orders = []
    for a, b in spans:
        cont = 100.0 + 500.0 * np.sinc(np.linspace(-0.8, 0.8, b - a)) ** 2
        f = cont * (1 + rng.normal(0, 0.01, b - a))
        orders.append({"wavelength": grid[a:b], "flux": f, "continuum": cont, "mask": np.zeros(b - a, bool),
                       "uncertainty": np.sqrt(cont)})
    m = merge_orders(orders)
    np.testing.assert_array_equal(m["wavelength"], grid)  # every wavelength once, none lost
    assert np.all(np.diff(m["wavelength"]) > 0)
    o0, o1 = orders[0], orders[1]
    k = np.arange(1000, 1400)
    n0, n1 = o0["flux"][k] / o0["continuum"][k], o1["flux"][k - 1000] / o1["continuum"][k - 1000]
    w0, w1 = o0["continuum"][k], o1["continuum"][k - 1000]
    np.testing.assert_allclose(m["flux"][k] / m["continuum"][k], (w0 * n0 + w1 * n1) / (w0 + w1), rtol=1e-12)
    np.testing.assert_allclose(m["uncertainty"][k], np.hypot(o0["uncertainty"][k], o1["uncertainty"][k - 1000]))
    np.testing.assert_allclose(m["flux"][:1000], o0["flux"][:1000])  # one order alone: its own samples
    assert not m["mask"].any()
    # a masked sample adds nothing: the other order alone gives the value there
    o1["mask"][100] = True
    m2 = merge_orders(orders)
    np.testing.assert_allclose(m2["flux"][1100], o0["flux"][1100])


def test_merged_demo_echelle_orders_are_one_increasing_spectrum():
    from atlas.io import read

    ds = read(DEMO / "corrans_star_echelle.fits")
    seq, plan, _ = prepare(ds, BuildOptions(merge_orders=True))
    w = seq["wavelength"]
    assert plan.mode == "velocity" and np.all(np.diff(w) > 0)
    assert w[0] == np.min(seq["wavelength"]) and w.size < ds["flux"].size  # overlaps are taken once
    norm = seq["flux"] / seq["continuum"]
    assert 0.97 < np.nanmedian(norm) < 1.03
