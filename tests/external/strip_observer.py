"""Removes the observer's position keywords (HGLN_OBS, HGLT_OBS, DSUN_OBS) from FITS
frames, in place, and writes fresh checksums: frames a measurement must refuse for want
of an observer (tests of the catalogue run). astropy.io.fits (Debian's python3-astropy)
does the FITS work."""
import sys

from astropy.io import fits

for path in sys.argv[1:]:
    with fits.open(path, mode="update", checksum=False) as hdus:
        for hdu in hdus:
            for key in ("HGLN_OBS", "HGLT_OBS", "DSUN_OBS"):
                if key in hdu.header:
                    del hdu.header[key]
            hdu.add_checksum()
    print(path)
