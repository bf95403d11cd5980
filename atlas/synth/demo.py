"""The demo data set: an invented observatory's night(s) on seven invented stars.

Everything here is invented for the demo: the observatory, its site, the observers,
the spectrograph, the stars, their names, coordinates, velocities and the dates.  The
spectra come from ``atlas.synth.model`` with photon noise from a generator started at a fixed number, so
``write_demo`` makes the same bytes every time on the same software.

Barycentric corrections: astropy ``SkyCoord.radial_velocity_correction`` at
mid-exposure, offline (bundled IERS tables), site from ``EarthLocation.from_geodetic``;
the observed-frame spectrum carries the star's RV and this correction combined as in
Wright & Eastman (2014, PASP 126, 838).
"""

from __future__ import annotations

import math
import os
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from atlas.synth import broaden, noise
from atlas.synth.continuum import planck_b_lambda
from atlas.synth.model import Star, default_lines, synthesize

NOISE_START = 41_977  # the random generator's starting number (fixed)
SNR_REF_A = 5500.0  # S/N is quoted per pixel in the continuum here (Å, observed)

OBSERVATORY = {
    "name": "Brackenfold Ridge Observatory (invented)",
    "lat_deg": 38.6127,
    "lon_deg": -4.2391,
    "height_m": 1412.0,
    "telescope": "Brackenfold 1.1 m (invented)",
    "instrument": "Saltmarsh echelle (invented)",
    "observers": "A. Quill, R. Tamsin (invented)",
}

WAVE_MIN_A, WAVE_MAX_A, STEP_KMS = 3800.0, 9000.0, 2.0


@dataclass(frozen=True)
class Observation:
    """One invented exposure of one invented star and how it is written."""

    file: str
    name: str
    spectral_class: str
    teff_k: float
    logg: float
    rv_kms: float
    vsini_kms: float
    ra_deg: float
    dec_deg: float
    start_utc: str
    exposure_s: float
    snr: float
    airmass: float
    resolving_power: float
    form: str  # "fits" (1-D log-linear image), "csv", "echelle"
    medium: str = "air"
    flux_calibrated: bool = False
    range_A: tuple[float, float] = (WAVE_MIN_A, WAVE_MAX_A)
    notes: str = ""
    extra: dict = field(default_factory=dict)


OBSERVATIONS: tuple[Observation, ...] = (
    Observation("vessa_ardane.fits", "Vessa Ardane", "O7 V", 37300.0, 4.0, 18.0, 110.0,
                84.211, 9.357, "2025-02-27T20:41:10", 900.0, 150.0, 1.21, 70000.0, "fits",
                medium="vacuum", notes="vacuum wavelengths (WAVE-LOG)"),
    Observation("corrans_star_echelle.fits", "Corran's Star", "B5 V", 15700.0, 4.2, -8.5, 160.0,
                101.872, -4.112, "2025-02-27T22:05:33", 600.0, 180.0, 1.34, 65000.0, "echelle",
                notes="echelle orders with blaze, air wavelengths"),
    Observation("lintel_12.fits", "Lintel 12", "A0 V", 9700.0, 4.2, -21.3, 45.0,
                121.455, 22.684, "2025-02-28T00:12:48", 480.0, 200.0, 1.08, 70000.0, "fits",
                flux_calibrated=True, notes="the one flux-calibrated spectrum"),
    Observation("hesk_4.csv", "Hesk 4", "F5 V", 6550.0, 4.3, 4.7, 12.0,
                143.907, 31.276, "2025-02-28T01:30:02", 1200.0, 120.0, 1.05, 60000.0, "csv",
                range_A=(4500.0, 6800.0), notes="CSV text, 4,500-6,800 Å"),
    Observation("marrows_lamp_2025-03-02.fits", "Marrow's Lamp", "G2 V", 5770.0, 4.4, 31.6, 2.5,
                168.338, 14.905, "2025-03-02T23:18:40", 1500.0, 140.0, 1.16, 75000.0, "fits",
                notes="first night"),
    Observation("marrows_lamp_2025-05-27.fits", "Marrow's Lamp", "G2 V", 5770.0, 4.4, 31.6, 2.5,
                168.338, 14.905, "2025-05-27T21:02:15", 1500.0, 110.0, 1.62, 75000.0, "fits",
                notes="second night: another barycentric correction"),
    Observation("ossery.fits", "Ossery", "K0 III", 4800.0, 2.5, -47.2, 3.0,
                189.644, 27.051, "2025-03-02T01:47:55", 900.0, 110.0, 1.11, 70000.0, "fits",
                notes="the giant (Teff from memory for a K0 III)"),
    Observation("dunlin_9.fits", "Dunlin 9", "M3 V", 3430.0, 4.8, 12.9, 2.0,
                203.518, 5.433, "2025-03-02T03:40:21", 1800.0, 60.0, 1.27, 70000.0, "fits",
                notes="S/N quoted at 5,500 Å; the blue end is much noisier"),
)


def mid_exposure_utc(obs: Observation) -> str:
    """ISO UTC time of mid-exposure: start + exposure / 2."""
    from astropy.time import Time, TimeDelta

    t = Time(obs.start_utc, scale="utc") + TimeDelta(obs.exposure_s / 2.0, format="sec")
    return t.isot


def barycentric_kms(obs: Observation) -> float:
    """Barycentric correction (km/s) for ``obs`` at mid-exposure, offline (astropy).

    References
    ----------
    Wright & Eastman (2014), PASP 126, 838; astropy SkyCoord.radial_velocity_correction.
    """
    import astropy.units as u
    from astropy.coordinates import EarthLocation, SkyCoord
    from astropy.time import Time
    from astropy.utils import iers

    iers.conf.auto_download = False
    iers.conf.auto_max_age = None
    site = EarthLocation.from_geodetic(
        lon=OBSERVATORY["lon_deg"] * u.deg, lat=OBSERVATORY["lat_deg"] * u.deg, height=OBSERVATORY["height_m"] * u.m
    )
    coord = SkyCoord(ra=obs.ra_deg * u.deg, dec=obs.dec_deg * u.deg, frame="icrs")
    v = coord.radial_velocity_correction(kind="barycentric", obstime=Time(mid_exposure_utc(obs), scale="utc"), location=site)
    return float(v.to_value(u.km / u.s))


def response(wave_A):
    """Relative throughput of the invented telescope + spectrograph + detector (peak 1)."""
    w = np.asarray(wave_A, dtype=np.float64)
    return np.exp(-0.5 * ((w - 6300.0) / 2100.0) ** 2)


def blaze(wave_A, centre_A: float, order: int):
    """Grating blaze efficiency of an echelle order: sinc^2(m (lambda - lambda_c) / lambda) (common practice)."""
    x = order * (np.asarray(wave_A) - centre_A) / np.asarray(wave_A)
    return np.sinc(x) ** 2


ECHELLE_K_A = 5.9e5  # m * lambda_centre (Å) of the invented echelle
ECHELLE_PIXELS = 2048


def echelle_orders(lo_A: float, hi_A: float):
    """(order numbers, centre wavelengths Å) covering ``lo_A``..``hi_A``."""
    m = np.arange(int(math.ceil(ECHELLE_K_A / hi_A)), int(math.floor(ECHELLE_K_A / lo_A)) + 1)[::-1]
    return m, ECHELLE_K_A / m


@dataclass
class Generated:
    """One generated exposure: observed wavelengths, counts/flux, uncertainty, truth."""

    obs: Observation
    wave_A: np.ndarray
    flux: np.ndarray
    sigma: np.ndarray
    continuum: np.ndarray  # the noise-free continuum level of ``flux`` (for normalising)
    barycentric_kms: float


def generate(obs: Observation, index: int, lines=None) -> Generated:
    """Make one exposure of the scenario (deterministic: generator started at ``NOISE_START + index``)."""
    if lines is None:
        lines = default_lines()
    rng = np.random.default_rng(NOISE_START + index)
    vb = barycentric_kms(obs)
    star = Star(teff_k=obs.teff_k, logg=obs.logg, vsini_kms=obs.vsini_kms, rv_kms=obs.rv_kms)
    if obs.form == "echelle":
        orders, centres = echelle_orders(*obs.range_A)
        dln = math.log1p(STEP_KMS / broaden.C_KMS)
        idx = np.arange(ECHELLE_PIXELS) - (ECHELLE_PIXELS - 1) / 2.0
        wave = centres[:, None] * np.exp(idx[None, :] * dln)
        shape = np.stack([blaze(wave[i], centres[i], orders[i]) for i in range(len(orders))])
    else:
        wave = broaden.log_grid(obs.range_A[0], obs.range_A[1], STEP_KMS)
        shape = np.ones_like(wave)
    syn = synthesize(wave, star, resolving_power=obs.resolving_power, medium=obs.medium,
                     barycentric_kms=vb, lines=lines, airmass=obs.airmass)
    cont = syn.continuum * response(wave) * shape
    ref = float(planck_b_lambda(SNR_REF_A, obs.teff_k) * response(SNR_REF_A))
    counts_cont = noise.scale_to_snr(cont, ref, obs.snr)
    noisy, sigma = noise.add_photon_noise(counts_cont * syn.normalised, rng)
    if obs.flux_calibrated:
        # Counts back to flux: divide by the response, scale to 2e-13 erg/s/cm2/Å at 5,500 Å.
        scale = 2e-13 / float(planck_b_lambda(SNR_REF_A, obs.teff_k))
        k = scale * syn.continuum / counts_cont
        noisy, sigma, counts_cont = noisy * k, sigma * k, syn.continuum * scale
    return Generated(obs, wave, noisy, sigma, counts_cont, vb)


# ---------------------------------------------------------------- writing files


def _header_cards(obs: Observation, vb: float):
    o = OBSERVATORY
    return [
        ("OBJECT", obs.name, "invented star"),
        ("RA", obs.ra_deg, "[deg] ICRS right ascension (invented)"),
        ("DEC", obs.dec_deg, "[deg] ICRS declination (invented)"),
        ("DATE-OBS", obs.start_utc, "UTC start of exposure"),
        ("EXPTIME", obs.exposure_s, "[s] exposure time"),
        ("TIMESYS", "UTC", "time scale of DATE-OBS"),
        ("OBSERVAT", o["name"], "invented observatory"),
        ("TELESCOP", o["telescope"], ""),
        ("INSTRUME", o["instrument"], ""),
        ("OBSERVER", o["observers"], ""),
        ("OBSGEO-B", o["lat_deg"], "[deg] site geodetic latitude (invented)"),
        ("OBSGEO-L", o["lon_deg"], "[deg] site geodetic longitude, east positive"),
        ("OBSGEO-H", o["height_m"], "[m] site height above WGS84 ellipsoid"),
        ("RESPOWER", obs.resolving_power, "resolving power lambda / delta-lambda"),
        ("AIRMASS", obs.airmass, "airmass at mid-exposure"),
        ("SPECSYS", "TOPOCENT", "wavelengths as observed at the telescope"),
    ]


def _atomic_write(path: Path, write) -> None:
    """Write through a temporary file in the same folder, then rename into place."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=".tmp-", suffix=path.suffix, dir=path.parent)
    os.close(fd)
    try:
        write(tmp)
        os.chmod(tmp, 0o644)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


def write_fits_1d(path: Path, g: Generated) -> None:
    """A 1-D FITS image with a log-linear spectral WCS and an UNCERTAINTY extension."""
    from astropy.io import fits

    obs = g.obs
    dln = math.log(g.wave_A[-1] / g.wave_A[0]) / (len(g.wave_A) - 1)
    hdr = fits.Header()
    hdr["CTYPE1"] = ("AWAV-LOG" if obs.medium == "air" else "WAVE-LOG", f"{obs.medium} wavelength, log-linear")
    hdr["CUNIT1"] = ("Angstrom", "")
    hdr["CRPIX1"] = (1.0, "")
    hdr["CRVAL1"] = (float(g.wave_A[0]), "[Angstrom] wavelength at pixel 1")
    hdr["CDELT1"] = (float(g.wave_A[0] * dln), "[Angstrom] CRVAL1 * step in ln(lambda)")
    hdr["BUNIT"] = ("erg/(s cm2 Angstrom)" if obs.flux_calibrated else "count", "")
    for k, v, c in _header_cards(obs, g.barycentric_kms):
        hdr[k] = (v, c)
    prim = fits.PrimaryHDU(g.flux.astype(np.float32), header=hdr)
    unc = fits.ImageHDU(g.sigma.astype(np.float32), name="UNCERTAINTY")
    unc.header["BUNIT"] = hdr["BUNIT"]
    _atomic_write(path, lambda p: fits.HDUList([prim, unc]).writeto(p, overwrite=True, output_verify="exception"))


def write_echelle(path: Path, g: Generated) -> None:
    """A 2-D echelle FITS file: flux (order x pixel), WAVELENGTH and UNCERTAINTY images."""
    from astropy.io import fits

    obs = g.obs
    hdr = fits.Header()
    hdr["BUNIT"] = ("count", "")
    hdr["MEDIUM"] = (obs.medium, "medium of the WAVELENGTH image")
    for k, v, c in _header_cards(obs, g.barycentric_kms):
        hdr[k] = (v, c)
    orders, _ = echelle_orders(*obs.range_A)
    hdr["ORDER0"] = (int(orders[0]), "echelle order number of the first row")
    prim = fits.PrimaryHDU(g.flux.astype(np.float32), header=hdr)
    wav = fits.ImageHDU(g.wave_A.astype(np.float64), name="WAVELENGTH")
    wav.header["BUNIT"] = ("Angstrom", f"{obs.medium} wavelength of each pixel")
    unc = fits.ImageHDU(g.sigma.astype(np.float32), name="UNCERTAINTY")
    unc.header["BUNIT"] = ("count", "")
    _atomic_write(path, lambda p: fits.HDUList([prim, wav, unc]).writeto(p, overwrite=True, output_verify="exception"))


def write_csv(path: Path, g: Generated) -> None:
    """CSV text: ``# key: value`` metadata lines, then ``wavelength_A,flux,uncertainty``."""
    obs, o = g.obs, OBSERVATORY
    meta = [
        ("target", obs.name),
        ("medium", obs.medium),
        ("ra_deg", f"{obs.ra_deg:.6f}"),
        ("dec_deg", f"{obs.dec_deg:.6f}"),
        ("obs_start_utc", obs.start_utc),
        ("exposure_s", f"{obs.exposure_s:g}"),
        ("site_lat_deg", f"{o['lat_deg']:.6f}"),
        ("site_lon_deg", f"{o['lon_deg']:.6f}"),
        ("site_height_m", f"{o['height_m']:g}"),
        ("resolving_power", f"{obs.resolving_power:g}"),
        ("flux_unit", "count"),
    ]
    lines = ["# Invented demo star: " + obs.name + " observed at the invented " + o["name"]]
    lines += [f"# {k}: {v}" for k, v in meta]
    lines.append("wavelength_A,flux,uncertainty")
    f32 = g.flux.astype(np.float32)
    s32 = g.sigma.astype(np.float32)
    lines += [f"{w:.4f},{f:.7g},{s:.5g}" for w, f, s in zip(g.wave_A, f32, s32, strict=True)]
    text = "\n".join(lines) + "\n"

    def write(p):
        with open(p, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)

    _atomic_write(path, write)


WRITERS = {"fits": write_fits_1d, "echelle": write_echelle, "csv": write_csv}


def readme_text(generated: list[Generated]) -> str:
    """demo_spectra/README.md: says what is invented and lists each star's true parameters."""
    o = OBSERVATORY
    rows = []
    for g in generated:
        ob = g.obs
        rows.append(
            f"| `{ob.file}` | {ob.name} | {ob.spectral_class} | {ob.teff_k:,.0f} | {ob.logg:.1f} | "
            f"{ob.rv_kms:+.1f} | {ob.vsini_kms:g} | {ob.snr:g} | {ob.resolving_power:,.0f} | "
            f"{ob.start_utc} | {g.barycentric_kms:+.3f} | {ob.medium} | {ob.notes} |"
        )
    return "\n".join([
        "# Demo spectra",
        "",
        "**Everything here is invented**: the stars, their names, coordinates and velocities, the",
        f"observatory ({o['name']}, latitude {o['lat_deg']}°, longitude {o['lon_deg']}° east, height",
        f"{o['height_m']:g} m), its telescope and spectrograph, the observers and the dates.  The spectra",
        "are synthetic, made by `atlas.synth` (a one-layer LTE model: Saha-Boltzmann line strengths,",
        "Voigt profiles, schematic molecular bands, rotation, instrument, photon noise), and any",
        "resemblance of a name or position to a real star or place is chance.",
        "",
        "The atomic lines are those of the Gaia-ESO line list (Heiter et al. 2021, A&A 645, A106;",
        "about 104,000 lines, 4,200-9,200 Å air) plus the curated hydrogen, helium and hot-star lines",
        "and the lines outside that range, each with the strength predicted for the star",
        "(`atlas.lines.predict`): thousands of lines for the F-K stars, few for the hot stars.",
        "Blueward of 4,200 Å only the curated lines are there, so the cool stars' spectra are",
        "visibly sparser below 4,200 Å.",
        "",
        "Regenerate them bit for bit with `striae demo --out demo_spectra` (random generator",
        f"started at {NOISE_START}); `striae demo --plot demo_spectra/classes.png` also draws `classes.png`.",
        "",
        "Wavelengths are as observed at the telescope (topocentric): the star's radial velocity and",
        "the barycentric correction are both in them.  The barycentric correction below is astropy's",
        "`SkyCoord.radial_velocity_correction` at mid-exposure (DATE-OBS + EXPTIME / 2), combined with",
        "the RV as in Wright & Eastman (2014, PASP 126, 838).  S/N is per pixel in the continuum at",
        f"{SNR_REF_A:,.0f} Å.  Pixels are {STEP_KMS:g} km/s apart (uniform in ln wavelength).",
        "Fluxes are counts (not flux-calibrated, with the instrument's throughput and, for the",
        "echelle file, the blaze of each order), except `lintel_12.fits`, calibrated to",
        "erg s^-1 cm^-2 Å^-1.  Telluric O2 and H2O lines are included at each exposure's airmass.",
        "",
        "| file | star | class | Teff (K) | log g | RV (km/s) | v sin i (km/s) | S/N | R | DATE-OBS (UTC start) | barycentric (km/s) | medium | notes |",
        "| --- | --- | --- | ---: | ---: | ---: | ---: | ---: | ---: | --- | ---: | --- | --- |",
        *rows,
        "",
        "Teff of the dwarfs: Pecaut & Mamajek (2013, ApJS 208, 9), Mamajek's table version",
        "2022.04.16, typed from memory; the K0 III giant's 4,800 K is from memory.",
        "",
        "Formats: the `.fits` files are 1-D images with a log-linear spectral WCS (`CTYPE1` =",
        "`AWAV-LOG` for air, `WAVE-LOG` for vacuum) and an `UNCERTAINTY` extension;",
        "`corrans_star_echelle.fits` holds orders x pixels with a `WAVELENGTH` image (air, `MEDIUM`",
        "keyword) and an `UNCERTAINTY` image; `hesk_4.csv` is text with `# key: value` metadata.",
        "The resolving power is in the `RESPOWER` keyword (CSV: `resolving_power`).",
        "",
    ])


def write_demo(out_dir, *, progress=None) -> list[Generated]:
    """Write every demo file and README.md into ``out_dir``; returns what was generated."""
    out = Path(out_dir)
    lines = default_lines()
    generated = []
    for i, obs in enumerate(OBSERVATIONS):
        g = generate(obs, i, lines)
        WRITERS[obs.form](out / obs.file, g)
        generated.append(g)
        if progress:
            progress(obs)
    text = readme_text(generated)

    def write(p):
        with open(p, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)

    _atomic_write(out / "README.md", write)
    return generated
