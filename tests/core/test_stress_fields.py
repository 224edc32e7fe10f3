"""The FITS ring finder on cutouts unlike the project's generator: unsubtracted sky, odd units, survey edges,
saturated stars, scaled 16-bit files, nonsense images (issue 14).

Fields come from benchmarks/stress_fields.py, a second generator written apart from
lensmass.core.realistic_fields on astropy.modeling (Sersic2D, Moffat2D, Gaussian2D, AiryDisk2D) and
astropy.convolution; the truth is the SIE theta_E whose critical curve encloses pi theta_E^2
(Kormann, Schneider & Bartelmann 1994), the convention of lensmass.core.sie. The full sweep with its
tables by feature is benchmarks/bench_ring_stress.py. Seeds 550000-559999 (tuning) here.
"""

import importlib.util
import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from astropy.io import fits
from astropy.modeling.models import Moffat2D, Sersic2D

from lensmass.core.cutout_masks import cutout_masks
from lensmass.core.errors import LensInputError
from lensmass.core.ringfinder import find_ring
from lensmass.core.sky_level import blank_lines, sky_plane

ROOT = Path(__file__).resolve().parents[2]
_spec = importlib.util.spec_from_file_location("stress_fields", ROOT / "benchmarks" / "stress_fields.py")
stress = importlib.util.module_from_spec(_spec)
sys.modules["stress_fields"] = stress
_spec.loader.exec_module(stress)


def test_truth_convention_on_a_circular_lens():
    # Narayan & Bartelmann (1996), eq. 29: a source on the axis of a singular isothermal sphere is seen as a
    # ring of radius theta_E; the ray tracer maps that circle onto the axis.
    assert stress.check_circular_convention(12.0) < 1e-9


@pytest.fixture(scope="module", params=[550210, 550235])
def ring_field(request):
    # Near-axis rings of 21.7 and 9.7 px (3.9-4.5 seeing FWHM): sky-dominated Poisson counts with a pedestal in
    # units of 1e3, and white noise with a pedestal in units of 1e2 (the generator's draws for these seeds).
    return stress.make_stress_field(request.param, "ring")


def test_units_and_sky_do_not_move_the_radius(ring_field):
    # Dimensional analysis (common practice): the radius cannot depend on the image's units, nor on a sky
    # level or gradient the cutout still holds; the sky is taken out by a plane fitted to the edge pixels.
    img = np.asarray(ring_field.image, float)
    img = img - np.nanmedian(img[:5])  # any pedestal the seed drew, so the reference has none to speak of
    yy, xx = np.mgrid[0:img.shape[0], 0:img.shape[1]]
    sigma = ring_field.noise_sigma
    ref = find_ring(img)
    assert ref.found
    for variant in (img * 1e-4, img * 1e4, img + 700 * sigma, img + 12 * sigma * (xx - yy) / img.shape[0]):
        r = find_ring(variant.astype(np.float32))
        assert r.found and abs(r.radius_pix / ref.radius_pix - 1) < 0.02


def test_sky_plane_recovers_a_pedestal_and_gradient():
    # A plane a + b x + c y fitted by least squares to sigma-clipped edge pixels (astropy sigma_clip; common
    # practice for a sky): a pedestal of 400 sigma and a slope of 0.1 sigma a pixel come back to 0.2 sigma.
    rng = np.random.default_rng(550300)
    yy, xx = np.mgrid[0:96, 0:96]
    gal = Sersic2D.evaluate(xx, yy, 50.0, 6.0, 4.0, 47.0, 48.0, 0.3, 0.5)
    sky = 400.0 + 0.1 * xx - 0.05 * yy
    p = sky_plane(gal + sky + rng.normal(0, 1, xx.shape))
    assert np.max(np.abs(p - sky)) < 0.6
    assert sky_plane(rng.normal(0, 1, xx.shape)) == 0.0


def test_zero_border_and_dead_column_are_masked():
    # A cutout at a survey's edge is padded with zeros; a dead column reads one value (common practice: such
    # pixels are blank, not data).
    img = np.random.default_rng(550301).normal(0, 1, (60, 70))
    img[:, 55:] = 0.0
    img[:, 20] = 0.0
    m = blank_lines(img)
    assert m[:, 55:].all() and m[:, 20].all() and not m[:, 21].any()


def test_saturated_star_with_bleed_trail_is_masked():
    # A star clipped at the detector's full well, with its bleed trail along the columns (Moffat 1969 profile,
    # astropy Moffat2D), is masked as a star, not taken for a tangential arc; the lens stays the centre.
    rng = np.random.default_rng(550302)
    yy, xx = np.mgrid[0:100, 0:100]
    img = Sersic2D.evaluate(xx, yy, 30.0, 5.0, 4.0, 50.0, 50.0, 0.2, 0.3) + rng.normal(0, 1, xx.shape)
    img += Moffat2D.evaluate(xx, yy, 40000.0, 12.0, 50.0, 3.0, 3.0)
    img[20:80, 11:14] = np.maximum(img[20:80, 11:14], 3000.0)
    img = np.minimum(img, 3000.0)
    m = cutout_masks(img, 1.0)
    star = next(o for o in m.objects if abs(o.x - 12) < 4 and abs(o.y - 50) < 6)
    assert star.kind == "star" and m.mask[50, 12] and m.mask[25, 12]
    assert np.hypot(m.center_x - 50, m.center_y - 50) < 1.5


@pytest.mark.parametrize("image", [np.full((64, 64), np.nan), np.full((64, 64), 3.5), np.zeros((50, 50)),
                                   np.full((40, 40), np.inf)])
def test_nonsense_images_get_one_sentence(image):
    # Common practice: a blank or constant image holds no measurement; the finder says so in one sentence.
    with pytest.raises(LensInputError) as err:
        find_ring(image)
    assert "\n" not in str(err.value) and str(err.value).endswith(".")


def test_noise_pictures_are_never_confident():
    # Pure noise (white, sky-dominated Poisson, smoothed as a resampled image) holds no ring: never confident.
    rng = np.random.default_rng(550303)
    from scipy.ndimage import gaussian_filter

    for img in (rng.normal(0, 1, (80, 80)), rng.poisson(900.0, (80, 80)).astype(float),
                gaussian_filter(rng.normal(0, 1, (80, 80)), 1.1) * 1e-3 + 5e-2):
        assert not find_ring(img).confident


def test_int16_fits_with_rotated_wcs_through_the_command_line(tmp_path):
    # FITS 4.0 (Pence et al. 2010): scaled 16-bit integers (BSCALE/BZERO, BLANK) and a rotated CD matrix;
    # the command line opens them with astropy and runs the same finder; theta_E comes back in arcsec.
    f = stress.make_stress_field(550246, "ring")  # theta_E 26.0 px at 7 px FWHM, cosmic rays, units of 1e-4
    path = tmp_path / "edge.fits"
    stress.write_fits(f, path, int16=True, rotate_deg=33.0)
    with fits.open(path) as hdul:
        assert hdul[0].header["BITPIX"] == 16 and "BSCALE" in hdul[0].header
    run = subprocess.run([sys.executable, "-m", "lensmass", "measure", str(path), "--auto-ring", "--accept-weak",
                          "--zl", "0.3", "--zs", "1.5", "--samples", "300", "--json"], capture_output=True, text=True,
                         cwd=ROOT, timeout=300)
    assert run.returncode == 0, run.stderr
    res = json.loads(run.stdout)
    truth = f.truth["theta_e_arcsec"]
    assert abs(res["theta_e_arcsec"] - truth) <= max(2 * res["theta_e_err_arcsec"], 0.05 * truth)


def test_cosmic_rays_are_masked_and_stars_are_not():
    # A cosmic ray or hot pixel is sharper than any sampled PSF (van Dokkum 2001, PASP 113, 1420: the edge
    # test; common practice): single hits and short tracks are flagged, a star of FWHM 1.8 px (astropy
    # Moffat2D, the sharpest our generators draw) and a bright galaxy core are not.
    from scipy.ndimage import gaussian_filter

    from lensmass.core.cutout_cleaning import sharp_pixels

    rng = np.random.default_rng(550304)
    yy, xx = np.mgrid[0:80, 0:80]
    alpha = 3.0
    gamma = 1.8 / (2 * np.sqrt(2 ** (1 / alpha) - 1))
    img = Moffat2D.evaluate(xx, yy, 300.0, 20.3, 60.6, gamma, alpha) + rng.normal(0, 1, xx.shape)
    galaxy = Sersic2D.evaluate(xx, yy, 60.0, 4.0, 4.0, 40.2, 40.4, 0.1, 0.0)
    img += gaussian_filter(galaxy, 1.8 / 2.3548)  # seen through the same seeing
    hits = [(10, 10), (70, 15), (55, 62)]
    for x, y in hits:
        img[y, x] += 200.0
    img[30, 8:11] += 150.0  # a three-pixel track
    m = sharp_pixels(img, 1.0)
    assert all(m[y, x] for x, y in hits) and m[30, 8:11].all()
    assert not m[60, 20] and not m[40, 40]


def test_correlated_noise_is_measured():
    # White noise smoothed by a Gaussian of sigma s (a resampled image) has large-area means 2 sqrt(pi) s times
    # noisier than white noise of the same pixel sigma (the sum of the kernel's autocorrelation; common
    # practice); the estimate is conservative (the high-pass takes a little) and 1 for white noise.
    from scipy.ndimage import gaussian_filter

    from lensmass.core.sky_level import noise_correlation

    rng = np.random.default_rng(550305)
    white = rng.normal(size=(160, 160))
    assert noise_correlation(white) < 1.1
    for s in (0.9, 1.2):
        f = noise_correlation(gaussian_filter(white, s))
        assert 0.75 * 2 * np.sqrt(np.pi) * s < f <= 1.02 * 2 * np.sqrt(np.pi) * s


def test_parts_are_the_lights_put_in():
    # The oracles' parts (StressField.lens_light, .parts: neighbour, companion, star, arc) are the noise-free lights
    # of the image: taken off a white-noise field they leave Gaussian noise of one noise unit (seed 962116, a ring with
    # a neighbour, no defects or field galaxies: the generator's draws), whose median absolute deviation x 1.4826 is
    # its sigma and whose largest of 5184 values stays under 5 sigma (P ~ 0.003; common practice).
    f = stress.make_stress_field(962116, "ring+neighbour")
    assert f.parts["neighbour"] is not None and f.parts["arc"].max() > 0
    lights = f.lens_light + sum(p for p in f.parts.values() if p is not None)
    rest = (f.image - lights) / f.noise_sigma
    rest = rest - np.median(rest)
    assert abs(1.4826 * np.median(np.abs(rest)) - 1.0) < 0.05 and np.abs(rest).max() < 5.0
    assert np.abs((f.image - lights + f.parts["neighbour"]) / f.noise_sigma - np.median(rest)).max() > 5.0
