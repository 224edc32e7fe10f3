"""The light options of ``lensmass estimate`` (and ``measure``) as a user runs them."""

import json
import sys

import numpy as np
import pytest

from lensmass.cli import main

LENS = ["estimate", "--theta-e", "1.2", "--zl", "0.2", "--zs", "0.7", "--h0", "70", "--om0", "0.3"]


def run(capsys, *extra):
    saved = list(sys.argv)
    try:
        code = main([*LENS, *extra])
    finally:
        sys.argv = saved
    out = capsys.readouterr()
    return code, out.out, out.err


def test_json_has_the_light_keys_with_intervals(capsys):
    code, out, err = run(capsys, "--theta-e-err", "0.05", "--lens-mag", "17.6", "--lens-mag-err", "0.05",
                         "--band", "V", "--mag-system", "Vega", "--r-eff", "2.4", "--stellar-ml", "4.0",
                         "--imf", "Chabrier", "--samples", "1000", "--json")
    assert code == 0, err
    result = json.loads(out)
    keys = ("light_luminosity_lsun", "light_band", "light_abs_mag", "mass_to_light", "stellar_mass_einstein_msun",
            "dark_fraction_einstein", "two_component_halo_m200_msun")
    for key in keys:
        assert key in result
    assert result["light_band"] == "V"
    for key in keys:
        if key != "light_band":
            lo, hi = result["intervals68"][key]
            assert lo < result[key] < hi
            assert key in result["models"]
    # Hogg et al. (2002) eq. 1 with astropy's distmod and Willmer's (2018) M_V = 4.81 (Vega)
    from astropy.cosmology import FlatLambdaCDM
    from scipy import special
    frac = special.gammainc(8, special.gammaincinv(8, 0.5) * (1.2 / 2.4) ** 0.25)
    lum = frac * 10 ** (-0.4 * (17.6 - FlatLambdaCDM(70, 0.3).distmod(0.2).value - 4.81))
    assert result["light_luminosity_lsun"] == pytest.approx(lum, rel=1e-8)


def test_table_shows_the_light_rows_and_the_defaults_note(capsys):
    code, out, _ = run(capsys, "--stellar-mass", "2.5e11", "--r-eff", "2.0")
    assert code == 0
    assert "M*(<theta_E)" in out and "f_DM(<theta_E)" in out and "stars+NFW M200" in out
    assert "IMF" in out


@pytest.mark.parametrize("extra, words", [
    (["--lens-mag", "17", "--band", "Q", "--r-eff", "2"], "Unknown band 'Q'"),
    (["--lens-mag", "17", "--band", "V"], "--r-eff"),
    (["--stellar-ml", "3"], "--lens-mag"),
])
def test_bad_light_input_is_one_line(capsys, extra, words):
    code, out, err = run(capsys, *extra)
    assert code == 2
    assert words in err and len(err.strip().splitlines()) == 1 and "Traceback" not in err


def test_estimate_without_light_options_is_unchanged(capsys):
    code, out, _ = run(capsys, "--json")
    assert code == 0
    assert "light_luminosity_lsun" not in json.loads(out)


def test_apply_light_photometry_on_an_image():
    # The measure hook: photometry on the image, zeropoint from a header keyword the user names.
    import argparse

    from astropy.io import fits

    from lensmass.commands.common import add_cosmology_options, add_halo_options, add_sampling_options
    from lensmass.commands.light_options import add_light_options, apply_light
    from lensmass.core.estimate import estimate

    parser = argparse.ArgumentParser()
    add_cosmology_options(parser)
    add_halo_options(parser)
    add_sampling_options(parser)
    add_light_options(parser, image=True)
    args = parser.parse_args(["--zeropoint-key", "MAGZP", "--band", "sdss_i", "--stellar-ml", "3",
                              "--samples", "500", "--h0", "70", "--om0", "0.3"])
    yy, xx = np.indices((81, 81))
    image = 5.0 + 40.0 * np.exp(-np.hypot(xx - 40, yy - 40) / 3.0)  # exponential lens on a flat sky
    header = fits.Header({"MAGZP": 26.0, "EXPTIME": 100.0})
    result = apply_light(args, estimate(1.2, 0.2, 0.7, cosmology="Planck18"), image=image, header=header,
                         x_pix=40.0, y_pix=40.0, theta_e_pix=6.0)
    phot = result["light_photometry"]
    assert phot["zeropoint"] == 26.0 and phot["exptime_s"] == 100.0
    # m = ZP - 2.5 log10(F / t) (common practice)
    assert phot["aperture_mag"] == pytest.approx(26.0 - 2.5 * np.log10(phot["flux"] / 100.0))
    assert result["light_abs_mag"] < 0 and "dark_fraction_einstein" in result
    args.zeropoint_key = "NOPE"
    from lensmass.core.errors import LensInputError
    with pytest.raises(LensInputError, match="no keyword 'NOPE'"):
        apply_light(args, estimate(1.2, 0.2, 0.7), image=image, header=header, x_pix=40.0, y_pix=40.0,
                    theta_e_pix=6.0)


def test_measure_with_photometry_on_the_image(tmp_path, capsys):
    # An invented field: exponential lens (astropy Sersic2D, n = 1) with a full ring at 8 px on a flat sky.
    from astropy.convolution import discretize_model
    from astropy.io import fits
    from astropy.modeling.models import Sersic2D

    size, c, r = 101, 50.0, 8.0
    lens = discretize_model(Sersic2D(amplitude=30.0, r_eff=5.0, n=1.0, x_0=c, y_0=c), (0, size), (0, size),
                            mode="oversample", factor=5)
    yy, xx = np.indices((size, size))
    ring = 100.0 * np.exp(-0.5 * ((np.hypot(xx - c, yy - c) - r) / 1.0) ** 2)
    path = tmp_path / "field_3.fits"
    fits.PrimaryHDU((lens + ring + 5.0).astype("f4"), header=fits.Header({"MAGZP": 27.0, "EXPTIME": 300.0})).writeto(path)
    angles = np.linspace(0, 2 * np.pi, 16, endpoint=False)
    points = tmp_path / "arc.csv"
    points.write_text("x,y\n" + "".join(f"{c + r * np.cos(a):.3f},{c + r * np.sin(a):.3f}\n" for a in angles))
    saved = list(sys.argv)
    try:
        code = main(["measure", str(path), "--points", str(points), "--pixel-scale", "0.1", "--zl", "0.25",
                     "--zs", "0.9", "--zeropoint-key", "MAGZP", "--band", "sdss_r", "--stellar-ml", "3",
                     "--arc-width", "9", "--json"])
    finally:
        sys.argv = saved
    out = capsys.readouterr()
    assert code == 0, out.err
    result = json.loads(out.out)
    phot = result["light_photometry"]
    assert phot["exptime_s"] == 300.0 and phot["masked_pixels_in_aperture"] > 0
    # the ring is masked and filled: the flux matches the Sersic enclosed light
    # (Graham & Driver 2005, eqs. 2 and 4) to a few per cent
    from lensmass.core.sersic import sersic_enclosed_fraction, sersic_total_flux
    expected = float(sersic_total_flux(30.0, 5.0, 1.0) * sersic_enclosed_fraction(result["theta_e_arcsec"] / 0.1, 5.0, 1.0))
    assert phot["flux"] == pytest.approx(expected, rel=0.03)
    assert "dark_fraction_einstein" in result and "light_luminosity_lsun" in result


def test_zeropoint_and_exposure_from_the_header():
    from astropy.io import fits

    from lensmass.commands.light_options import zeropoint_and_exposure
    from lensmass.core.errors import LensInputError

    # FITS standard (Pence et al. 2010, BUNIT): an image in count/s is a rate; EXPTIME must not divide it again
    rate = fits.Header({"MAGZERO": 30.0, "EXPTIME": 1800.0, "BUNIT": "count/s"})
    assert zeropoint_and_exposure(rate, zeropoint_key="MAGZERO")[:2] == (30.0, 1.0)
    counts = fits.Header({"MAGZERO": 30.0, "EXPTIME": 1800.0, "BUNIT": "count"})
    assert zeropoint_and_exposure(counts, zeropoint_key="MAGZERO")[:2] == (30.0, 1800.0)
    assert zeropoint_and_exposure(None, zeropoint=25.0, exptime=60.0)[:2] == (25.0, 60.0)
    with pytest.raises(LensInputError, match="one way only"):
        zeropoint_and_exposure(rate, zeropoint=25.0, zeropoint_key="MAGZERO")
    with pytest.raises(LensInputError, match="not a number"):
        zeropoint_and_exposure(fits.Header({"ZP": "bright"}), zeropoint_key="ZP")
