"""A JPEG's quality read back from its quantisation tables (lensmass.io.jpeg_tables).

Outside references: ITU-T T.81 Annex K (tables K.1 and K.2, the example tables) and the Independent
JPEG Group's quality scaling of them (``jpeg_set_quality``: 5000/q percent below 50, 200 - 2q from 50
up; common practice), as libjpeg inside Pillow writes them.
"""

import io

import numpy as np
import pytest
from PIL import Image

from lensmass.io.images import load_image
from lensmass.io.jpeg_tables import ANNEX_K_CHROMINANCE, ANNEX_K_LUMINANCE, quality_from_tables


def _noise_picture(mode="RGB"):
    a = np.random.default_rng(0).uniform(0, 255, (24, 24, 3)).astype(np.uint8)
    return Image.fromarray(a if mode == "RGB" else a[..., 0], mode)


def test_our_annex_k_tables_are_libjpegs_at_quality_50():
    # At quality 50 the IJG scale is 100%: libjpeg (through Pillow) stores the Annex K tables unchanged,
    # a second source for our transcription of T.81 Annex K.
    buf = io.BytesIO()
    _noise_picture().save(buf, "JPEG", quality=50)
    tables = Image.open(buf).quantization
    assert list(tables[0]) == ANNEX_K_LUMINANCE.tolist()
    assert list(tables[1]) == ANNEX_K_CHROMINANCE.tolist()


@pytest.mark.parametrize("quality", [60, 75, 90, 95])
@pytest.mark.parametrize("mode, subsampling", [("RGB", 2), ("RGB", 0), ("L", 0)])
def test_a_jpeg_written_by_pillow_reads_back_its_quality(tmp_path, quality, mode, subsampling):
    # Pillow (libjpeg) writes the IJG tables of the quality asked for: the reader gives that quality back.
    path = tmp_path / "cutout.jpg"
    _noise_picture(mode).save(path, "JPEG", quality=quality, subsampling=subsampling)
    img = load_image(path)
    assert img.lossy and img.jpeg_quality == quality
    assert any(f"quality about {quality}" in n for n in img.notes)
    assert any("half resolution" in n for n in img.notes) == (mode == "RGB" and subsampling == 2)


def test_another_encoders_tables_read_as_the_ijg_quality_of_the_same_coarseness():
    # Tables twice Annex K are IJG quality 25 (5000 / 25 = 200%); rounded differently (an encoder of
    # its own), they still read as about 25.
    own = [np.clip(np.round(ANNEX_K_LUMINANCE * 2.04), 1, 255).astype(int).tolist(),
           np.clip(np.round(ANNEX_K_CHROMINANCE * 1.97), 1, 255).astype(int).tolist()]
    buf = io.BytesIO()
    _noise_picture().save(buf, "JPEG", qtables=own)
    assert abs(quality_from_tables(Image.open(buf).quantization) - 25) <= 1


def test_pngs_have_no_jpeg_quality(tmp_path):
    _noise_picture().save(tmp_path / "cutout.png")
    img = load_image(tmp_path / "cutout.png")
    assert not img.lossy and img.jpeg_quality is None
