"""A round neighbour on the lens's light is masked; an arc drawn out along the ring at the same place is not.

Fields built from astropy models (astropy.modeling Sersic2D lens, neighbour or arc, Ring2D ring, blurred
by astropy.convolution's Gaussian2DKernel): an Einstein ring lies at one radius about the lens centre (an SIS's ring
at theta_E, Narayan & Bartelmann 1996, eq. 29), a lensed arc is stretched along it (tangentially; common practice), a
neighbouring galaxy is not.
"""

import numpy as np
import pytest
from astropy.convolution import Gaussian2DKernel, convolve_fft
from astropy.modeling.models import Ring2D, Sersic2D

from lensmass.core.cutout_masks import cutout_masks
from lensmass.core.segment_geometry import touching_labels

N, C, THETA_E, NOISE = 81, 40.0, 12.0, 1.0


def _field(ellip: float, seed: int = 5, at_theta_e: float = 1.6) -> tuple[np.ndarray, tuple[float, float]]:
    """Lens (Sersic n = 4, 40 sigma at its centre after the blur), a faint ring at THETA_E, and a blob (Sersic n = 2,
    R_e 3 pixels, ellipticity ``ellip`` with its major axis along y: the tangent there) ``at_theta_e`` THETA_E to the
    right of the centre, peaking at 30 sigma after the blur."""
    yy, xx = np.mgrid[0:N, 0:N].astype(float)
    lens = Sersic2D(amplitude=1.0, r_eff=10.0, n=4.0, x_0=C, y_0=C, ellip=0.1, theta=0.3)(xx, yy)
    ring = Ring2D(amplitude=1.0, x_0=C, y_0=C, r_in=THETA_E - 1.0, width=2.0)(xx, yy)
    x_n = C + at_theta_e * THETA_E
    blob = Sersic2D(amplitude=1.0, r_eff=3.0, n=2.0, x_0=x_n, y_0=C, ellip=ellip, theta=np.pi / 2)(xx, yy)
    kern = Gaussian2DKernel(1.3)
    lens = convolve_fft(lens, kern)
    lens *= 40 * NOISE / lens.max()
    ring = 4 * NOISE * convolve_fft(ring, kern) / convolve_fft(ring, kern).max()
    blob = convolve_fft(blob, kern)
    blob *= 30 * NOISE / blob.max()
    img = lens + ring + blob + np.random.default_rng(seed).normal(0, NOISE, (N, N))
    return img, (x_n, C)


def _kind_at(img: np.ndarray, at: tuple[float, float]) -> str:
    m = cutout_masks(img, NOISE)
    near = [o for o in m.objects if np.hypot(o.x - at[0], o.y - at[1]) < 3]
    assert near, "the blob was not segmented"
    return near[0].kind


@pytest.mark.parametrize("seed", [5, 6, 7])
def test_round_neighbour_on_the_lens_light_is_masked(seed):
    img, at = _field(0.0, seed)
    assert _kind_at(img, at) == "galaxy"
    m = cutout_masks(img, NOISE)
    assert m.mask[int(at[1]), int(round(at[0]))]
    assert not m.mask[int(C), int(C - THETA_E)]  # the ring on the other side is left alone


def test_tangential_arc_on_the_lens_light_is_kept():
    """An arc (axis ratio 0.3 before the blur) at 1.4 THETA_E, where it joins the lens's blend: measured whole it looks
    round (elongation 1.3), but its own light is drawn out along the tangent, so it is not masked as a neighbour."""
    touching = 0
    for seed in (5, 6, 7):
        img, at = _field(0.7, seed, 1.4)
        m = cutout_masks(img, NOISE)
        lens = next(o for o in m.objects if o.kind == "lens")
        arc = next(o for o in m.objects if np.hypot(o.x - at[0], o.y - at[1]) < 3)
        if arc.label in touching_labels(m.segments, lens.label):
            touching += 1
            assert arc.kind in ("arc", "faint")
    assert touching
