"""Write the malformed-file corpus in tests/data/malformed/ (each file tiny, each broken in one way).

Run from the repository root: ``.venv/bin/python tests/data/make_malformed.py``.
tests/io/test_malformed.py checks that this script still makes exactly the
committed files, and that ``striae inspect`` refuses each with a one-line reason.
"""

from __future__ import annotations

import gzip
import struct
import sys
import zlib
from pathlib import Path

import numpy as np
from astropy.io import fits

HERE = Path(__file__).resolve().parent / "malformed"


def _image(n=64, **cards) -> fits.PrimaryHDU:
    hdu = fits.PrimaryHDU(np.linspace(1.0, 2.0, n).astype(np.float32))
    hdu.header.update(cards)
    return hdu


def _good_image() -> fits.PrimaryHDU:
    return _image(CTYPE1="WAVE", CUNIT1="Angstrom", CRVAL1=5000.0, CDELT1=0.1, CRPIX1=1.0)


def _png() -> bytes:
    """A valid 1x1 grey PNG (PNG specification, W3C 2003): not a spectrum."""

    def chunk(kind: bytes, data: bytes) -> bytes:
        body = kind + data
        return struct.pack(">I", len(data)) + body + struct.pack(">I", zlib.crc32(body))

    ihdr = struct.pack(">IIBBBBB", 1, 1, 8, 0, 0, 0, 0)
    idat = zlib.compress(b"\x00\x80")
    return b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", ihdr) + chunk(b"IDAT", idat) + chunk(b"IEND", b"")


def _fits_bytes(hdul) -> bytes:
    import io

    buf = io.BytesIO()
    fits.HDUList(hdul).writeto(buf)
    return buf.getvalue()


def _multispec(spec: str, n=64) -> bytes:
    """A one-order image with its dispersion in WAT2 cards (the published WAT header convention)."""
    hdu = _image(n, WAT0_001="system=multispec")
    hdu.header["WAT1_001"] = "wtype=multispec label=Wavelength units=angstroms"
    hdu.header["WAT2_001"] = f'wtype=multispec spec1 = "{spec}"'
    return _fits_bytes([hdu])


def _csv(header: str, rows, comments=()) -> bytes:
    lines = [f"# {c}" for c in comments] + [header] + [",".join(map(str, r)) for r in rows]
    return ("\n".join(lines) + "\n").encode()


def files() -> dict[str, bytes]:
    """File name -> bytes of every malformed file."""
    w = [5000.0, 5000.1, 5000.2, 5000.3, 5000.4, 5000.5]
    f = [1.0, 0.98, 0.95, 0.97, 1.01, 1.0]
    out: dict[str, bytes] = {}
    out["not_spectrum.png"] = _png()
    out["random_notes.txt"] = b"Night log: dome opened 21:04, clouds at 23:10, closed 23:40.\n"
    out["empty.fits"] = b""
    good = _fits_bytes([_good_image()])
    out["truncated.fits"] = good[: 2880 + 100]
    # the END card is overwritten by non-ASCII garbage: the header never ends
    end = good.index(b"END" + b" " * 77)
    out["corrupt_header.fits"] = good[:end] + bytes(range(128, 208)) + good[end + 80 :]
    out["no_spectral_axis.fits"] = _fits_bytes([_image()])
    err = fits.ImageHDU(np.full(60, 0.01, dtype=np.float32), name="ERROR")
    out["length_mismatch.fits"] = _fits_bytes([_good_image(), err])
    out["unknown_unit.fits"] = _fits_bytes(
        [_image(CTYPE1="WAVE", CUNIT1="bananas", CRVAL1=5000.0, CDELT1=0.1, CRPIX1=1.0)]
    )
    out["no_wavelength_column.csv"] = _csv("pixel,flux", zip(range(6), f, strict=True))
    out["shuffled.csv"] = _csv("wavelength_A,flux", zip([w[0], w[2], w[1], *w[3:]], f, strict=True))
    out["repeated.csv"] = _csv("wavelength_A,flux", zip([*w[:3], w[2], *w[4:]], f, strict=True))
    out["all_nan.csv"] = _csv("wavelength_A,flux", zip(w, ["nan"] * 6, strict=True))
    rows = [[a, b] for a, b in zip(w, f, strict=True)]
    rows[3] = [w[3]]
    out["length_mismatch.csv"] = _csv("wavelength_A,flux", rows)
    out["unknown_unit.csv"] = _csv("wavelength_bogus,flux", zip(w, f, strict=True))
    out["nonfinite_wavelength.csv"] = _csv(
        "wavelength_nm,flux", zip([*w[:2], "inf", *w[3:]], f, strict=True)
    )
    # the older dispersion conventions and compressed files
    out["bad_dc_flag.fits"] = _fits_bytes(
        [_image(CTYPE1="LINEAR", CRVAL1=5000.0, CDELT1=0.1, **{"DC-FLAG": -1})]
    )
    out["wat2_unknown_dispersion.fits"] = _multispec("1 1 7 5000. 0.1 64 0. 1. 2.")
    out["wat2_unsupported_function.fits"] = _multispec(
        "1 1 2 0. 0. 64 0. 1. 2. 1. 0. 5 3 1. 2. 3. 4. 5. 6."
    )
    out["wat2_missing_coefficients.fits"] = _multispec(
        "1 1 2 0. 0. 64 0. 1. 2. 1. 0. 1 4 1. 64. 5000. 1."
    )
    two_rows = fits.PrimaryHDU(np.ones((2, 64), dtype=np.float32))
    two_rows.header["WAT0_001"] = "system=multispec"
    two_rows.header["WAT2_001"] = 'wtype=multispec spec1 = "1 1 0 5000. 0.1 64 0. 1. 2."'
    out["wat2_missing_order.fits"] = _fits_bytes([two_rows])
    out["corrupt.fits.gz"] = gzip.compress(good, mtime=0)[:400]
    out["ambiguous_unit.txt"] = b"2100.0 1.0\n2100.5 0.9\n2101.0 1.1\n"
    out["four_columns_no_header.txt"] = b"5000.0 1.0 0.1 7\n5000.1 0.9 0.1 7\n"
    flagged = fits.BinTableHDU.from_columns(
        [
            fits.Column(name="WAVE", format="D", array=np.array(w), unit="Angstrom"),
            fits.Column(name="FLUX", format="D", array=np.array(f)),
            fits.Column(name="QUALITY", format="J", array=np.ones(6, dtype=np.int32)),
        ]
    )
    out["all_flagged_bad.fits"] = _fits_bytes([fits.PrimaryHDU(), flagged])
    return out


def main(folder: Path = HERE) -> list[Path]:
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    written = []
    for name, data in files().items():
        path = folder / name
        path.write_bytes(data)
        written.append(path)
    return written


if __name__ == "__main__":
    for p in main(Path(sys.argv[1]) if len(sys.argv) > 1 else HERE):
        print(p, p.stat().st_size, "bytes")
