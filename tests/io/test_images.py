"""Image loading: FITS variants, WCS pixel scales, pictures, colour composites, points files, bad files."""

import numpy as np
import pytest
from astropy.io import fits
from astropy.wcs import WCS
from astropy.wcs.utils import proj_plane_pixel_scales

from lensmass.core.errors import LensInputError
from lensmass.io.images import colour_composite, display_limits, load_image, wcs_pixel_scales_arcsec
from lensmass.io.points import read_points, write_points


def _wcs_header(cd_arcsec, ra=201.4471, dec=4.1882):
    w = WCS(naxis=2)
    w.wcs.ctype = ["RA---TAN", "DEC--TAN"]
    w.wcs.crval = [ra, dec]
    w.wcs.crpix = [10.0, 12.0]
    w.wcs.cd = np.asarray(cd_arcsec, float) / 3600.0
    return w.to_header()


def _rotated_cd(scale_x, scale_y, rot_deg, skew_deg=0.0):
    r, k = np.radians(rot_deg), np.radians(skew_deg)
    return np.array([[-scale_x * np.cos(r), scale_y * np.sin(r + k)], [scale_x * np.sin(r), scale_y * np.cos(r + k)]])


@pytest.mark.parametrize("cd", [
    _rotated_cd(0.2, 0.2, 0.0),
    _rotated_cd(0.2, 0.2, 37.0),
    _rotated_cd(0.25, 0.21, -110.0),
    _rotated_cd(0.2, 0.2, 15.0, skew_deg=3.0),
])
def test_pixel_scale_against_astropy(tmp_path, cd):
    # Reference: astropy.wcs.utils.proj_plane_pixel_scales for the axis scales; the area-equivalent
    # scale is sqrt(|det CD|) (Greisen & Calabretta 2002).
    p = tmp_path / "w.fits"
    fits.PrimaryHDU(np.zeros((20, 24), np.float32), header=_wcs_header(cd)).writeto(p)
    im = load_image(p)
    ref = proj_plane_pixel_scales(WCS(fits.getheader(p))) * 3600
    assert im.pixel_scale_xy_arcsec == pytest.approx(tuple(ref), rel=1e-10)
    assert wcs_pixel_scales_arcsec(im.wcs)[:2] == pytest.approx(tuple(ref), rel=1e-10)
    assert im.pixel_scale_arcsec == pytest.approx(np.sqrt(abs(np.linalg.det(cd))), rel=1e-10)
    if abs(ref[0] - ref[1]) > 1e-6:
        assert any("Unequal pixel scales" in n for n in im.notes)


def test_pc_cdelt_header_and_sky_round_trip(tmp_path):
    # Reference: astropy's own pixel_to_world_values (0-based) on the same header.
    h = fits.Header()
    h.update({"CTYPE1": "RA---TAN", "CTYPE2": "DEC--TAN", "CRVAL1": 27.6631, "CRVAL2": 33.0917, "CRPIX1": 50.0,
              "CRPIX2": 40.0, "CDELT1": -0.25 / 3600, "CDELT2": 0.25 / 3600, "PC1_1": np.cos(0.3),
              "PC1_2": -np.sin(0.3), "PC2_1": np.sin(0.3), "PC2_2": np.cos(0.3)})
    p = tmp_path / "pc.fits"
    fits.PrimaryHDU(np.ones((80, 100), np.float32), header=h).writeto(p)
    im = load_image(p)
    assert im.pixel_scale_arcsec == pytest.approx(0.25)
    ra, dec = im.pixel_to_sky(49.0, 39.0)  # 0-based pixel of CRPIX (1-based 50, 40)
    assert (float(ra), float(dec)) == pytest.approx((27.6631, 33.0917), abs=1e-10)
    ref = [float(v) for v in WCS(h).pixel_to_world_values(12.3, 70.1)]
    assert [float(v) for v in im.pixel_to_sky(12.3, 70.1)] == pytest.approx(ref, abs=1e-12)
    x, y = im.sky_to_pixel(*im.pixel_to_sky(12.3, 70.1))
    assert (float(x), float(y)) == pytest.approx((12.3, 70.1), abs=1e-8)


def test_scaled_integers_blank_and_nan(tmp_path):
    # FITS standard (Pence et al. 2010): physical = BZERO + BSCALE x stored; BLANK marks missing integers.
    raw = np.arange(12, dtype=np.int16).reshape(3, 4)
    raw[1, 2] = -999
    hdu = fits.PrimaryHDU(raw)
    hdu.header["BSCALE"], hdu.header["BZERO"], hdu.header["BLANK"] = 0.5, 100.0, -999
    p = tmp_path / "int.fits"
    hdu.writeto(p)
    im = load_image(p, pixel_scale_arcsec=0.2)
    assert im.data[0, 3] == pytest.approx(100 + 0.5 * 3)
    assert np.isnan(im.data[1, 2])
    f = np.ones((4, 4), np.float32)
    f[0, 0] = np.nan
    fits.PrimaryHDU(f).writeto(tmp_path / "nan.fits")
    im2 = load_image(tmp_path / "nan.fits", pixel_scale_arcsec=0.2)
    assert np.isnan(im2.data[0, 0]) and any("masked" in n for n in im2.notes)


def test_compressed_extension_and_named_hdu(tmp_path):
    # Tile-compressed images (FITS 4.0, Pence et al. 2010) are read through astropy's CompImageHDU.
    data = np.random.default_rng(1).normal(0, 1, (32, 40)).astype(np.float32)
    hl = fits.HDUList([fits.PrimaryHDU(), fits.CompImageHDU(data, name="SCI", quantize_level=-0.01)])
    p = tmp_path / "comp.fits"
    hl.writeto(p)
    im = load_image(p, pixel_scale_arcsec=0.2)
    assert im.hdu_index == 1 and im.data.shape == (32, 40)
    assert np.allclose(im.data, data, atol=0.02)
    assert load_image(p, hdu="SCI", pixel_scale_arcsec=0.2).data.shape == (32, 40)
    with pytest.raises(LensInputError, match="no HDU '5'"):
        load_image(p, hdu=5)


def test_cube_needs_a_plane(tmp_path):
    p = tmp_path / "cube.fits"
    fits.PrimaryHDU(np.arange(60, dtype=np.float32).reshape(3, 4, 5)).writeto(p)
    with pytest.raises(LensInputError, match="`plane`"):
        load_image(p)
    im = load_image(p, plane=2, pixel_scale_arcsec=0.1)
    assert im.data[0, 0] == 40.0 and im.plane == 2


def test_no_wcs_needs_pixel_scale(tmp_path):
    p = tmp_path / "nowcs.fits"
    fits.PrimaryHDU(np.ones((5, 5), np.float32)).writeto(p)
    im = load_image(p)
    assert im.pixel_scale_arcsec is None
    with pytest.raises(LensInputError, match="`pixel_scale_arcsec`"):
        im.require_pixel_scale()
    with pytest.raises(LensInputError, match="RA/Dec"):
        im.pixel_to_sky(1, 1)


def test_png_rows_as_stored_and_grey(tmp_path):
    # Pixel convention: row 0 of a PNG is its top row as stored; luma weights are ITU-R BT.601.
    from PIL import Image

    arr = np.zeros((6, 8, 3), np.uint8)
    arr[0, 5] = (255, 0, 0)
    Image.fromarray(arr).save(tmp_path / "pic.png")
    im = load_image(tmp_path / "pic.png", pixel_scale_arcsec=0.3)
    assert im.data.shape == (6, 8)
    assert im.data[0, 5] == pytest.approx(0.299 * 255, rel=1e-5)
    assert im.wcs is None and im.pixel_scale_arcsec == 0.3
    with pytest.raises(LensInputError, match="`pixel_scale_arcsec`"):
        load_image(tmp_path / "pic.png").require_pixel_scale()


@pytest.mark.parametrize("content,match", [
    (b"", "empty"),
    (b"this is a text file, not an image\n" * 20, "not a valid FITS"),
])
def test_bad_files(tmp_path, content, match):
    p = tmp_path / "bad.fits"
    p.write_bytes(content)
    with pytest.raises(LensInputError, match=match):
        load_image(p)


def test_truncated_all_nan_and_one_dimensional(tmp_path):
    good = tmp_path / "good.fits"
    fits.PrimaryHDU(np.ones((200, 200), np.float32)).writeto(good)
    cut = tmp_path / "cut.fits"
    cut.write_bytes(good.read_bytes()[:30000])
    with pytest.raises(LensInputError, match="truncated|damaged"):
        load_image(cut)
    fits.PrimaryHDU(np.full((4, 4), np.nan, np.float32)).writeto(tmp_path / "nan.fits")
    with pytest.raises(LensInputError, match="Every pixel"):
        load_image(tmp_path / "nan.fits")
    fits.PrimaryHDU(np.ones(10, np.float32)).writeto(tmp_path / "line.fits")
    with pytest.raises(LensInputError, match="1-D"):
        load_image(tmp_path / "line.fits")
    with pytest.raises(LensInputError, match="No such image"):
        load_image(tmp_path / "missing.fits")
    assert good.exists()  # nothing the user had is touched


def test_colour_composite_and_display_limits():
    r, g, b = (np.full((3, 4), v) for v in (1.0, 0.5, 0.0))
    rgb = colour_composite(r, g, b, limits=[(0, 1)] * 3)
    assert rgb.shape == (3, 4, 3) and rgb[0, 0, 0] == pytest.approx(1.0) and rgb[0, 0, 2] == 0.0
    with pytest.raises(LensInputError, match="aligned"):
        colour_composite(r, g, np.zeros((2, 2)))
    lo, hi = display_limits(np.arange(10000.0).reshape(100, 100), 1, 99)
    assert lo == pytest.approx(99, abs=2) and hi == pytest.approx(9900, abs=2)


def test_points_files(tmp_path):
    p = tmp_path / "pts.csv"
    write_points(p, [1.5, 2.0, 3.25], [4.0, 5.0, 6.0])
    t = read_points(p)
    assert t.frame == "pixel" and t.a.tolist() == [1.5, 2.0, 3.25]
    (tmp_path / "sky.csv").write_text("# clicked\nRA,Dec,label\n201.1,4.2,a\n201.2,4.3,b\n")
    assert read_points(tmp_path / "sky.csv").frame == "sky"
    (tmp_path / "bad.csv").write_text("x,y\n1,2\n3,oops\n")
    with pytest.raises(LensInputError, match="Row 3"):
        read_points(tmp_path / "bad.csv")
    (tmp_path / "hdr.csv").write_text("a,b\n1,2\n")
    with pytest.raises(LensInputError, match="header"):
        read_points(tmp_path / "hdr.csv")


def test_load_colour_composite_from_three_bands(tmp_path):
    from lensmass.io.images import load_colour_composite

    hdr = _wcs_header(_rotated_cd(0.2, 0.2, 0.0))
    paths = []
    for i, v in enumerate((3.0, 2.0, 1.0)):
        p = tmp_path / f"band{i}.fits"
        fits.PrimaryHDU(np.full((20, 24), v, np.float32) + np.arange(24, dtype=np.float32), header=hdr).writeto(p)
        paths.append(p)
    assert load_colour_composite(paths).shape == (20, 24, 3)
    shifted = _wcs_header(_rotated_cd(0.2, 0.2, 0.0), ra=201.45)
    fits.PrimaryHDU(np.ones((20, 24), np.float32), header=shifted).writeto(tmp_path / "off.fits")
    with pytest.raises(LensInputError, match="not aligned"):
        load_colour_composite([paths[0], paths[1], tmp_path / "off.fits"])
