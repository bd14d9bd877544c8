#!/usr/bin/python3
"""Reference FITS files for tests/imaging/fits_test.cpp, written by astropy.io.fits
(Debian's python3-astropy), and a manifest of what astropy reads back from each.

usage: write_fits.py FOLDER

Writes into FOLDER one small image per BITPIX (FITS Standard 4.0 Table 8) with
BSCALE/BZERO and BLANK (§4.4.2.5), unsigned 16-bit by the BZERO = 32768 convention
(§5.2.5), floats holding NaN and ±Inf (§5.3), an image in an IMAGE extension after an
empty primary (§7.1), a cube of one plane, Rice tile-compressed images
(astropy.io.fits.CompImageHDU, Pence et al. 2009), and, for the refusal tests, a cube
of three planes, a header with no data and a file whose only data are a binary table.

manifest.json: {"images": [{name, hdu, bitpix, compressed, width, height, pixels
(rows as FITS axis 2, null for NaN, "inf"/"-inf"), nonfinite, keywords {KEY: value}}],
"refused": [names]}. Every expected value is what astropy itself reads from the file
written, so the check is against astropy, not against this script's arithmetic.
"""
import json
import math
import os
import sys

import numpy as np
from astropy.io import fits

WIDTH, HEIGHT = 6, 4  # not square: a transposed read cannot pass


def pattern(dtype, low, high):
    """Values spread from low to high over the image, different in every pixel."""
    n = WIDTH * HEIGHT
    values = np.linspace(low, high, n)
    return values.reshape(HEIGHT, WIDTH).astype(dtype)


def observer_cards(header):
    # Invented values of the kinds a coronagraph frame carries (not a real observation).
    header["DATE-OBS"] = ("2031-03-04T07:00:00.000", "start of the exposure")
    header["EXPTIME"] = (12.5, "[s] exposure")
    header["NSUM"] = (4, "frames summed")
    header["POLAR"] = (False, "polarised")
    header["OBSRVTRY"] = ("Test Orbiter", "invented observer")


def expected_pixels(path, hdu_index):
    """astropy's physical values (scaling applied), NaN where the stored value is BLANK."""
    with fits.open(path) as hdul:
        hdu = hdul[hdu_index]
        data = np.array(hdu.data, dtype=np.float64)
        blank = hdu.header.get("BLANK")
    if blank is not None:
        with fits.open(path, do_not_scale_image_data=True) as hdul:
            raw = np.array(hdul[hdu_index].data)
        data[raw == blank] = np.nan
    return data.reshape(-1, data.shape[-1])[-HEIGHT:] if data.ndim == 3 else data


def as_json(value):
    if isinstance(value, (float, np.floating)):
        if math.isnan(value):
            return None
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return float(value)
    return value


def entry(path, hdu_index, compressed, keys):
    data = expected_pixels(path, hdu_index)
    with fits.open(path) as hdul:
        header = hdul[hdu_index].header
        bitpix = header["ZBITPIX"] if compressed and "ZBITPIX" in header else header["BITPIX"]
        keywords = {}
        for key in keys:
            value = header[key]
            keywords[key] = bool(value) if isinstance(value, (bool, np.bool_)) else value
    return {
        "name": os.path.basename(path),
        "hdu": hdu_index,
        "bitpix": int(bitpix),
        "compressed": compressed,
        "width": int(data.shape[1]),
        "height": int(data.shape[0]),
        "pixels": [[as_json(v) for v in row] for row in data],
        "nonfinite": int(np.count_nonzero(~np.isfinite(data))),
        "keywords": keywords,
    }


def write_scaled(folder, name, dtype, bitpix, bscale, bzero, blank):
    # Stored integers across most of the type's range; one pixel BLANK.
    info = np.iinfo(dtype)
    low, high = max(info.min + 1, -2**40), min(info.max, 2**40)
    stored = pattern(np.float64, low, high).round().astype(dtype)
    stored[1, 2] = blank
    header = fits.Header()
    observer_cards(header)
    hdu = fits.PrimaryHDU(stored, header=header)
    # Stored values kept as they are; BSCALE/BZERO/BLANK only describe them (§4.4.2.5).
    hdu.header["BSCALE"] = bscale
    hdu.header["BZERO"] = bzero
    hdu.header["BLANK"] = blank
    path = os.path.join(folder, name)
    hdu.writeto(path, overwrite=True)
    with fits.open(path) as hdul:
        assert hdul[0].header["BITPIX"] == bitpix
    return entry(path, 0, False, ["DATE-OBS", "EXPTIME", "NSUM", "POLAR", "OBSRVTRY", "BSCALE", "BZERO"])


def main():
    folder = sys.argv[1]
    os.makedirs(folder, exist_ok=True)
    images = []
    images.append(write_scaled(folder, "bitpix8.fits", np.uint8, 8, 2.0, -100.0, 255))
    images.append(write_scaled(folder, "bitpix16.fits", np.int16, 16, 0.5, 1000.0, -32768))
    images.append(write_scaled(folder, "bitpix32.fits", np.int32, 32, 1.0e-3, -5.0, -2147483648))
    images.append(write_scaled(folder, "bitpix64.fits", np.int64, 64, 1.0e-9, 3.0, -9223372036854775808))

    # Unsigned 16-bit: astropy stores uint16 as int16 with BZERO = 32768 (§5.2.5, Table 11).
    path = os.path.join(folder, "uint16.fits")
    fits.PrimaryHDU(pattern(np.uint16, 0, 65535)).writeto(path, overwrite=True)
    images.append(entry(path, 0, False, ["BZERO"]))

    # Floats with NaN and ±Inf (§5.3), and with BSCALE/BZERO on a float image.
    data = pattern(np.float32, -3.5e4, 7.25e4)
    data[0, 0], data[2, 3], data[3, 5] = np.nan, np.inf, -np.inf
    path = os.path.join(folder, "float32.fits")
    fits.PrimaryHDU(data).writeto(path, overwrite=True)
    images.append(entry(path, 0, False, []))

    path = os.path.join(folder, "float64_scaled.fits")
    hdu = fits.PrimaryHDU(pattern(np.float64, -1.0, 1.0))
    hdu.header["BSCALE"] = 2.0
    hdu.header["BZERO"] = 10.0
    hdu.writeto(path, overwrite=True)
    images.append(entry(path, 0, False, ["BSCALE"]))

    # The image in an extension after an empty primary; the primary carries observer
    # keywords the extension lacks, and a DATE-OBS the extension overrides.
    primary = fits.PrimaryHDU()
    primary.header["DSUN_OBS"] = (1.5e11, "[m] invented")
    primary.header["OBSRVTRY"] = "Test Orbiter"
    primary.header["DATE-OBS"] = "2031-01-01T00:00:00"
    image = fits.ImageHDU(pattern(np.float32, 0.0, 23.0), name="FRAME")
    image.header["DATE-OBS"] = "2031-03-04T07:12:00"
    path = os.path.join(folder, "extension.fits")
    fits.HDUList([primary, image]).writeto(path, overwrite=True)
    images.append(entry(path, 1, False, ["DATE-OBS"]))

    # A cube of one plane: one image.
    path = os.path.join(folder, "cube1.fits")
    fits.PrimaryHDU(pattern(np.float32, 5.0, 28.0).reshape(1, HEIGHT, WIDTH)).writeto(path, overwrite=True)
    images.append(entry(path, 0, False, []))

    # Rice tile compression (astropy.io.fits.CompImageHDU): integers losslessly, and
    # floats quantised by the convention, NaN kept as its null value.
    header = fits.Header()
    observer_cards(header)
    path = os.path.join(folder, "rice_int16.fits")
    fits.HDUList([fits.PrimaryHDU(), fits.CompImageHDU(pattern(np.int16, -30000, 30000), header=header,
                                                       compression_type="RICE_1")]).writeto(path, overwrite=True)
    images.append(entry(path, 1, True, ["DATE-OBS", "EXPTIME", "NSUM", "POLAR", "OBSRVTRY"]))

    rng = np.random.default_rng(7)
    data = (pattern(np.float32, 100.0, 200.0) + rng.normal(0.0, 3.0, (HEIGHT, WIDTH))).astype(np.float32)
    data[1, 1] = np.nan
    path = os.path.join(folder, "rice_float32.fits")
    fits.HDUList([fits.PrimaryHDU(), fits.CompImageHDU(data, compression_type="RICE_1",
                                                       quantize_level=16.0)]).writeto(path, overwrite=True)
    images.append(entry(path, 1, True, []))

    # Refused: a cube of three planes, a header with no data anywhere, tables only.
    fits.PrimaryHDU(np.zeros((3, HEIGHT, WIDTH), dtype=np.float32)).writeto(
        os.path.join(folder, "cube3.fits"), overwrite=True)
    fits.PrimaryHDU().writeto(os.path.join(folder, "header_only.fits"), overwrite=True)
    table = fits.BinTableHDU.from_columns([fits.Column(name="HEIGHT", format="E", array=np.arange(5.0))])
    fits.HDUList([fits.PrimaryHDU(), table]).writeto(os.path.join(folder, "table_only.fits"), overwrite=True)

    manifest = {"images": images, "refused": ["cube3.fits", "header_only.fits", "table_only.fits"]}
    with open(os.path.join(folder, "manifest.json"), "w") as out:
        json.dump(manifest, out, indent=1)


if __name__ == "__main__":
    main()
