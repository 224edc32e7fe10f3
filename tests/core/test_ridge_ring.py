"""Ridge refinement, lens-light fit and ring finder: inject and recover on generated fields."""

import json
from pathlib import Path

import numpy as np
import pytest

from lensmass.core import raytrace as rt
from lensmass.core.einstein import measure_theta_e_auto_ring, measure_theta_e_from_points, theta_e_from_pixels
from lensmass.core.lenslight import fit_lens_light
from lensmass.core.progress import OperationCancelled
from lensmass.core.ridge import refine_to_ridge
from lensmass.core.ringfinder import find_center, find_ring

DEMO = Path(__file__).resolve().parents[2] / "demo_fields"


def _field(*, scale=0.2, theta_e=1.4, src_mag=24.0, lens_mag=20.5, size_arcsec=16.0, with_source=True, seed=1,
           q=0.85, psf_kind="gaussian"):
    n = int(round(size_arcsec / scale))
    c = (n - 1) / 2 + 0.3
    sources = [rt.SersicSource(rt.flux_from_mag(src_mag), 0.15, 1.0, 0.8, 10.0, 0.04, -0.03)] if with_source else []
    return rt.simulate_field(
        shape=(n, n), pixel_scale_arcsec=scale, center_x=c, center_y=c, lenses=[rt.SIELens(theta_e, q, 30.0)],
        sources=sources, foreground=[rt.SersicSource(rt.flux_from_mag(lens_mag), 1.2, 4.0, 0.8, 30.0)],
        psf_fwhm_arcsec=0.8, psf_kind=psf_kind, seed=seed), c


def test_ridge_of_blurred_thin_ring():
    # A thin ring blurred by a Gaussian: exp(-(r^2+R^2)/2s^2) I0(rR/s^2) (exact 2-D convolution of a
    # circle, Abramowitz & Stegun 9.6.16); its ridge after the sqrt(r) correction is R within 0.05 px.
    from scipy.special import i0e

    yy, xx = np.mgrid[0:61, 0:61]
    r = np.hypot(xx - 30.2, yy - 29.7)
    big_r, s = 12.0, 1.7
    img = np.exp(-((r - big_r) ** 2) / (2 * s * s)) * i0e(r * big_r / s**2)
    for ang in np.radians([0, 40, 135, 250]):
        p = refine_to_ridge(img, 30.2 + 14 * np.cos(ang), 29.7 + 14 * np.sin(ang), 30.2, 29.7)
        assert p.ok
        assert p.radius_pix == pytest.approx(big_r, abs=0.05)


def test_ridge_without_a_ridge_keeps_the_point():
    yy, xx = np.mgrid[0:41, 0:41]
    slope = 100.0 - np.hypot(xx - 20, yy - 20)  # falling light, no ridge
    p = refine_to_ridge(slope, 30.0, 20.0, 20.0, 20.0)
    assert not p.ok and (p.x, p.y) == (30.0, 20.0)
    nan_img = np.full((41, 41), np.nan)
    assert not refine_to_ridge(nan_img, 30.0, 20.0, 20.0, 20.0).ok


def test_lens_light_fit_recovers_sersic():
    # Injected Sersic (Graham & Driver 2005) blurred by a 0.8" Gaussian: R_e, n and the PSF width back.
    sim, c = _field(with_source=False, lens_mag=20.0, seed=4)
    m = fit_lens_light(sim.image, c, c)
    assert m.r_eff_pix * 0.2 == pytest.approx(1.2, rel=0.1)
    assert m.sersic_n == pytest.approx(4.0, rel=0.2)
    assert m.psf_fwhm_pix * 0.2 == pytest.approx(0.8, rel=0.1)
    assert np.std(m.residual) == pytest.approx(sim.noise_sigma, rel=0.2)


@pytest.mark.parametrize("scale,src_mag,seed", [(0.2, 24.0, 1), (0.2, 24.8, 2), (0.12, 24.0, 3)])
def test_ring_finder_recovers_injected_ring(scale, src_mag, seed):
    # Inject and recover: SIE theta_E = 1.4" (Kormann et al. 1994 normalisation, critical curve of
    # area pi theta_E^2) at two signal-to-noise levels and two pixel scales; within 2%.
    sim, c = _field(scale=scale, src_mag=src_mag, seed=seed)
    ring = find_ring(sim.image)
    # Confident only when the ring is thin for the seeing (calibrated against generated ring galaxies,
    # lensmass.core.ring_confidence._calibrate): at 0.12" pixels this source's ring is 2.9 seeing widths wide.
    assert ring.kind == "ring" and (ring.confident or scale < 0.2)
    theta, err = theta_e_from_pixels(ring.radius_pix, ring.radius_err_pix, scale)
    assert theta == pytest.approx(1.4, rel=0.02)
    assert 0 < err < 0.1
    assert (ring.center_x, ring.center_y) == pytest.approx((c, c), abs=0.5)


@pytest.mark.parametrize("seed", [5, 6])
def test_no_ring_reported_without_a_source(seed):
    sim, _ = _field(with_source=False, seed=seed)
    ring = find_ring(sim.image)
    assert not ring.confident
    noise = np.random.default_rng(seed).normal(0, 1, (80, 80))
    assert not find_ring(noise).found


def test_point_fit_after_refinement_recovers_theta_e():
    # Inject and recover: jittered clicks (1 px) on the ridge points, refined onto the ridge of the
    # lens-subtracted image, then a circle about the lens: within 2% of theta_E.
    sim, c = _field(seed=7)
    pts = np.array(sim.arc_points_xy)[::6]
    jit = pts + np.random.default_rng(7).normal(0, 1.0, pts.shape)
    m = measure_theta_e_from_points(jit[:, 0], jit[:, 1], image=sim.image, pixel_scale_arcsec=0.2,
                                    center=(c, c), refine=True)
    assert m.theta_e_arcsec == pytest.approx(1.4, rel=0.02)


def test_find_center_and_cancel():
    sim, c = _field(with_source=False, seed=8)
    assert find_center(sim.image) == pytest.approx((c, c), abs=0.5)
    with pytest.raises(OperationCancelled):
        find_ring(sim.image, should_stop=lambda: True)
    seen = []
    find_ring(sim.image, progress=seen.append)
    assert seen[-1] == 1.0 and all(0 <= f <= 1 for f in seen)


def _truth(name):
    return json.loads((DEMO / f"{name}.truth.json").read_text())


@pytest.mark.parametrize("name,shape,use_centre", [
    ("tris_ring_a", "circle", False), ("tris_ring_a", "ellipse", False), ("tris_cluster_d", "circle", True),
    ("tris_double_b", "circle", True),
])
def test_demo_arc_points_give_true_theta_e(name, shape, use_centre):
    # Demo fields (our own generator): a fit through the truth arc points is within 2% of theta_E.
    from lensmass.io.images import load_image

    t = _truth(name)
    im = load_image(DEMO / f"{name}.fits")
    pts = np.array(t["arc_points_xy"])
    centre = (t["center_x"], t["center_y"]) if use_centre else None
    m = measure_theta_e_from_points(pts[:, 0], pts[:, 1], image=im, shape=shape, center=centre)
    assert m.theta_e_arcsec == pytest.approx(t["theta_e_arcsec"], rel=0.02)
    assert m.center_ra is not None


def test_demo_double_images_and_auto_ring():
    from lensmass.io.images import load_image

    t = _truth("tris_double_b")
    im = load_image(DEMO / "tris_double_b.fits")
    imgs = np.array(t["image_points_xy"])
    m = measure_theta_e_from_points(imgs[:, 0], imgs[:, 1], image=im, shape="images")
    assert m.theta_e_arcsec == pytest.approx(t["theta_e_arcsec"], rel=0.02)
    t = _truth("tris_ring_a")
    m, ring = measure_theta_e_auto_ring(load_image(DEMO / "tris_ring_a.fits"))
    assert ring.confident
    assert m.theta_e_arcsec == pytest.approx(t["theta_e_arcsec"], rel=0.02)
    assert (m.center_ra, m.center_dec) == pytest.approx((t["center_ra"], t["center_dec"]), abs=0.3 / 3600)


@pytest.mark.parametrize("name", ["tris_ring_a", "tris_cluster_d"])
def test_demo_refined_clicks_give_true_theta_e(name):
    # Clicks scattered by 1 px around the truth arc points, refined onto the ridge (plain image first)
    # (Moffat seeing in the demo), then a circle about the lens: within 2% of theta_E.
    from lensmass.io.images import load_image

    t = _truth(name)
    im = load_image(DEMO / f"{name}.fits")
    pts = np.array(t["arc_points_xy"])
    jit = pts + np.random.default_rng(3).normal(0, 1.0, pts.shape)
    m = measure_theta_e_from_points(jit[:, 0], jit[:, 1], image=im, center=(t["center_x"], t["center_y"]),
                                    refine=True)
    # Under the ring galaxy's bright light the raw image shows no ridge at 69 of the 72 clicks: those are
    # searched on the lens-subtracted image, whose ridges sit up to 0.3 px (4%) inside the truth arc points
    # (the Sersic model's misfit under the ring), so within 4% and within 2 stated sigma.
    rel = 0.04 if name == "tris_ring_a" else 0.02
    assert m.theta_e_arcsec == pytest.approx(t["theta_e_arcsec"], rel=rel)
    assert abs(m.theta_e_arcsec - t["theta_e_arcsec"]) <= 2 * m.theta_e_err_arcsec + 0.02 * t["theta_e_arcsec"]
    if name == "tris_ring_a":
        assert any("lens-subtracted" in n for n in m.notes)


def test_group_scale_ring_behind_a_large_bright_galaxy():
    # Inject and recover at group scale: theta_E = 5" (20 pixels of 0.25"), behind a 3.5" n = 4 galaxy
    # large enough that the lens-light fit runs on a binned cut-out; the galaxy's flux comes back
    # (Graham & Driver 2005 total flux) and the ring within 2%.
    n, c = 160, 79.7
    lens_light = [rt.SersicSource(rt.flux_from_mag(18.6), 3.5, 4.0, 0.8, 30.0)]
    sim = rt.simulate_field(shape=(n, n), pixel_scale_arcsec=0.25, center_x=c, center_y=c,
                            lenses=[rt.SIELens(5.0, 0.8, 30.0)], foreground=lens_light, seed=3,
                            sources=[rt.SersicSource(rt.flux_from_mag(24.0), 0.2, 1.0, 0.8, 10.0, 0.05, -0.03)])
    ring = find_ring(sim.image)
    assert ring.confident
    assert ring.radius_pix * 0.25 == pytest.approx(5.0, rel=0.02)
    assert ring.lens_light.total_flux == pytest.approx(rt.flux_from_mag(18.6), rel=0.1)


def test_demo_group_ring_is_not_the_galaxy_core():
    # Inject and recover on the demo group (our generator: SIE theta_E = 5", Moffat seeing the
    # Gaussian-blurred lens model cannot match): the ring, not the residual of the bright core (a few
    # pixels), confident, within 2.5% and inside 2 stated sigma. The refit with the ring masked keeps
    # only the core and the outskirts of the galaxy (the ring is 3 seeing FWHM wide), and leaves the ring
    # 2.1% inside the truth (4.89 +- 0.10"); the finder kept the first fit's ring (0.8% off) while the
    # lens-light fit sampled the cusp at pixel centres.
    from lensmass.io.images import load_image

    t = _truth("tris_group_c")
    ring = find_ring(load_image(DEMO / "tris_group_c.fits").data)
    assert ring.confident and ring.kind == "ring"
    scale = t["pixel_scale_arcsec"]
    assert ring.radius_pix * scale == pytest.approx(t["theta_e_arcsec"], rel=0.025)
    assert abs(ring.radius_pix * scale - t["theta_e_arcsec"]) <= 2 * ring.radius_err_pix * scale


def test_demo_ring_lens_light_is_the_galaxy():
    # The demo ring's lens galaxy (our generator: Sersic R_e = 1.2" = 6 px, n = 4, Moffat seeing) as the
    # finder models it with the ring masked: R_e within 10% (a refit once stopped at 4.1 px in a false
    # minimum of a cusp sampled at fixed points), and no runaway of left-out pixels.
    from lensmass.io.images import load_image

    t = _truth("tris_ring_a")
    ring = find_ring(load_image(DEMO / "tris_ring_a.fits").data)
    light = ring.lens_light
    assert ring.confident and ring.radius_pix * 0.2 == pytest.approx(t["theta_e_arcsec"], rel=0.02)
    assert light.r_eff_pix * t["pixel_scale_arcsec"] == pytest.approx(t["lens_light_model"][0]["r_eff_arcsec"], rel=0.1)
    assert not any("before converging" in n for n in light.notes)
    left_out = [int(n.split()[0]) for n in light.notes if "left out" in n]
    assert not left_out or left_out[0] < 50


def test_demo_double_is_not_a_confident_ring():
    # Two point-like images either side of the lens are no ring (the images' own fit measures them).
    from lensmass.io.images import load_image

    assert not find_ring(load_image(DEMO / "tris_double_b.fits").data).confident


def test_profile_smoothing_makes_no_peak_at_the_inner_edge():
    # A profile falling steadily outwards (a galaxy core's residual) has no interior maximum after
    # smoothing (edge padding; zero padding dents the first bin and fakes a peak beside it).
    from scipy.signal import find_peaks

    from lensmass.core.ring_sectors import _smooth_profile

    r = np.arange(3.25, 40, 0.5)
    assert find_peaks(_smooth_profile(30 * np.exp(-r / 4.0)))[0].size == 0
    assert find_peaks(np.convolve(30 * np.exp(-r / 4.0), [0.25, 0.5, 0.25], mode="same"))[0].tolist() == [1]


@pytest.mark.parametrize("psf_kind", ["gaussian", "moffat"])
def test_barely_resolved_ring_is_flagged_and_its_error_covers_the_truth(psf_kind):
    # Inject and recover a ring of theta_E = 1.0" under 0.8" seeing (1.25 FWHM): the lens-light fit
    # then absorbs part of the ring, so the finder must not call it confident, and its error
    # (with the systematic term) must cover the injected radius within 2 sigma.
    sim, _ = _field(theta_e=1.0, seed=2, psf_kind=psf_kind)
    ring = find_ring(sim.image)
    assert ring.found and not ring.confident
    theta, err = theta_e_from_pixels(ring.radius_pix, ring.radius_err_pix, 0.2)
    assert abs(theta - 1.0) < 2 * err
    assert any("barely resolved" in w for w in ring.warnings)


def test_ring_radius_errors_cover_the_injected_radius():
    # Inject and recover over seeing kinds, radii and seeds (our generator: SIE theta_E, Kormann et al.
    # 1994 normalisation): the reported error, with its lens-model terms, covers the truth within
    # 2 sigma in every field (a 72-run sweep of this kind: 75% within 1 sigma, all within 2).
    for psf_kind, theta_e, seed in [("gaussian", 1.4, 3), ("moffat", 1.4, 2), ("gaussian", 2.0, 1),
                                    ("moffat", 2.0, 4), ("moffat", 1.0, 1)]:
        sim, _ = _field(theta_e=theta_e, seed=seed, psf_kind=psf_kind)
        ring = find_ring(sim.image)
        theta, err = theta_e_from_pixels(ring.radius_pix, ring.radius_err_pix, 0.2)
        assert abs(theta - theta_e) < 2 * err, (psf_kind, theta_e, seed, theta, err)
