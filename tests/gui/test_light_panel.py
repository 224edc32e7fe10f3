"""The "Light & dark matter" panel driven as a user would (offscreen Qt)."""

import numpy as np
import pytest
from astropy.convolution import discretize_model
from astropy.io import fits
from astropy.modeling.models import Sersic2D

pytest.importorskip("PySide6")
from PySide6.QtCore import Qt  # noqa: E402
from PySide6.QtGui import QColor, QImage, QPainter  # noqa: E402

from lensmass.core.estimate import estimate  # noqa: E402
from lensmass.core.light import add_light  # noqa: E402
from lensmass.core.photometry import lens_magnitude_inside  # noqa: E402
from lensmass.gui.canvas import ImageCanvas  # noqa: E402
from lensmass.gui.light_panel import APERTURE_COLOUR, LightPanel  # noqa: E402
from lensmass.gui.model import SystemFit, WindowModel  # noqa: E402
from lensmass.gui.workers import TaskRunner  # noqa: E402
from lensmass.io.images import LoadedImage  # noqa: E402

SIZE, C, RADIUS = 101, 50.0, 8.0


class Window:
    """The two window calls a panel may use (panel_registry), on the real background runner."""

    def __init__(self):
        self.messages = []
        self.runner = TaskRunner(show_message=self.messages.append)

    def run_task(self, fn, label, on_result, on_error=None):
        return self.runner.start(fn, label, on_result, on_error)

    def show_message(self, text):
        self.messages.append(text)


def _image():
    # lens: astropy Sersic2D (n = 1), plus an arc at theta_E and a flat sky of 5 counts
    lens = discretize_model(Sersic2D(amplitude=30.0, r_eff=5.0, n=1.0, x_0=C, y_0=C), (0, SIZE), (0, SIZE),
                            mode="oversample", factor=5)
    yy, xx = np.indices((SIZE, SIZE))
    rr, ang = np.hypot(xx - C, yy - C), np.arctan2(yy - C, xx - C)
    arc = 150.0 * np.exp(-0.5 * ((rr - RADIUS) / 1.0) ** 2) * (np.abs(ang - 1.0) < 0.7)
    points = [(C + RADIUS * np.cos(a), C + RADIUS * np.sin(a)) for a in np.linspace(0.3, 1.7, 12)]
    header = fits.Header({"MAGZP": 27.5, "EXPTIME": 200.0})
    return LoadedImage(data=lens + arc + 5.0, path="field_7.fits", header=header, pixel_scale_arcsec=0.15), points


@pytest.fixture
def setup(qtbot):
    model = WindowModel()
    loaded, points = _image()
    model.set_image(loaded)
    for xy in points:
        model.add_mark("point", 0, xy)
    model.set_texts({"z_l": "0.2", "z_s": "0.7"})
    fit = SystemFit("circle", C, C, RADIUS, RADIUS, 0.0, RADIUS * 0.15, 0.02, len(points), "circle through marks")
    model.set_fit(0, fit, None)
    theta, err, kwargs = model.estimate_request()
    kwargs["samples"] = 500
    model.mc_samples = 500
    model.set_result(0, estimate(theta, theta_e_err=err, **kwargs), None)
    canvas = ImageCanvas()
    window = Window()
    panel = LightPanel(model, canvas, window)
    qtbot.addWidget(panel)
    qtbot.addWidget(canvas)
    return model, canvas, window, panel


def _type(qtbot, panel, key, text):
    edit = panel.edits[key]
    edit.clear()
    qtbot.keyClicks(edit, text)


def _press(qtbot, panel, window):
    qtbot.mouseClick(panel.run_button, Qt.LeftButton)
    qtbot.waitUntil(lambda: not window.runner.busy, timeout=20000)


def test_catalogue_magnitude_gives_the_same_numbers_as_the_core(qtbot, setup):
    model, canvas, window, panel = setup
    _type(qtbot, panel, "mag", "17.6")
    _type(qtbot, panel, "mag_err", "0.05")
    _type(qtbot, panel, "r_eff", "2.4")
    panel.system.setCurrentIndex(panel.system.findData("Vega"))
    panel.stellar.setCurrentIndex(panel.stellar.findData("ml"))
    _type(qtbot, panel, "stellar_value", "4")
    _type(qtbot, panel, "imf", "Chabrier")
    _press(qtbot, panel, window)
    light = panel.light_result
    assert light is not None, panel.status.text()
    # one source for each number: the same core call as the command line
    kwargs = model.session.estimate_kwargs(0)
    direct = add_light(estimate(model.fit.theta_e_arcsec, theta_e_err=0.02, **{**kwargs, "samples": 500}),
                       band="V", mag_system="Vega", lens_mag=17.6, lens_mag_err=0.05, r_eff_arcsec=2.4,
                       stellar_ml=4.0, imf="Chabrier", cosmology=kwargs["cosmology"], samples=500)
    assert light["dark_fraction_einstein"] == pytest.approx(direct["dark_fraction_einstein"], rel=1e-12)
    assert panel.values["light_luminosity_lsun"].text() not in ("", "–")
    assert panel.intervals["mass_to_light"].text().startswith("[")
    assert "Chabrier" in panel.notes.text()
    assert "IMF" in panel.values["stellar_mass_einstein_msun"].toolTip()


def test_photometry_on_the_image_masks_the_arc_and_draws_the_aperture(qtbot, setup):
    model, canvas, window, panel = setup
    panel.source.setCurrentIndex(panel.source.findData("image"))
    assert panel.image_box.isVisibleTo(panel) and not panel.catalogue_box.isVisibleTo(panel)
    _type(qtbot, panel, "zeropoint_key", "MAGZP")
    _type(qtbot, panel, "arc_width", "5")
    panel.band.setCurrentText("sdss_i")
    _press(qtbot, panel, window)
    light = panel.light_result
    assert light is not None, panel.status.text()
    phot = light["light_photometry"]
    assert phot["zeropoint"] == 27.5 and phot["exptime_s"] == 200.0 and phot["masked_pixels_in_aperture"] > 0
    same = lens_magnitude_inside(model.image.data, C, C, RADIUS, zeropoint=27.5, exptime_s=200.0,
                                 arc_points_xy=model.active_system.points, arc_width_pix=5.0)
    assert phot["aperture_mag"] == pytest.approx(same["aperture_mag"], abs=1e-12)
    assert "Photometry inside theta_E" in panel.notes.text()
    # the overlay: aperture circle drawn in its colour onto a blank picture of the canvas
    canvas.resize(400, 400)
    canvas.zoom, canvas._left, canvas._top = 4.0, 0.0, 0.0
    canvas._shape = (SIZE, SIZE)
    picture = QImage(400, 400, QImage.Format_ARGB32)
    picture.fill(QColor("black"))
    painter = QPainter(picture)
    panel._draw(painter, canvas)
    painter.end()
    colours = {picture.pixelColor(x, y).name() for x in range(0, 400, 2) for y in range(0, 400, 2)}
    assert APERTURE_COLOUR in colours
    assert len(colours) > 2  # mask tint and annulus too


def test_bad_input_is_one_sentence_and_keeps_the_fields(qtbot, setup):
    model, canvas, window, panel = setup
    _type(qtbot, panel, "mag", "seventeen")
    qtbot.mouseClick(panel.run_button, Qt.LeftButton)
    assert panel.light_result is None
    assert "magnitude must be a number" in panel.status.text()
    assert panel.edits["mag"].text() == "seventeen"
    _type(qtbot, panel, "mag", "17.6")  # no R_e: the core's sentence comes back from the worker
    _press(qtbot, panel, window)
    # the core's sentence names the window's field, never a command-line flag
    assert panel.light_result is None and "(effective radius)" in panel.status.text()
    assert "--" not in panel.status.text() and "`" not in panel.status.text()


def test_no_result_yet_and_stale_results(qtbot, setup):
    model, canvas, window, panel = setup
    _type(qtbot, panel, "mag", "17.6")
    _type(qtbot, panel, "r_eff", "2.4")
    _press(qtbot, panel, window)
    assert panel.light_result is not None
    model.set_result(0, None, "Enter the lens redshift z_l (a number above 0).")
    assert panel.light_result is None and "again" in panel.status.text()
    qtbot.mouseClick(panel.run_button, Qt.LeftButton)
    assert "lens redshift" in panel.status.text()


def test_registered_in_the_panel_registry():
    from lensmass.gui.panel_registry import load_panel_classes

    classes, problems = load_panel_classes([("lensmass.gui.light_panel", "LightPanel")])
    assert classes == [LightPanel] and not problems


def test_in_the_real_window_on_the_demo_ring_field(qtbot, make_window):
    # The whole path a user takes: open the ring field, click the ring, type the redshifts,
    # then photometry inside theta_E with the zeropoint from the header keyword MAGZERO.
    from tests.gui.conftest import click_image, demo_field, type_into, wait_for_result, wait_idle
    from tests.gui.test_window import ring_points

    window = make_window(load_panels=True)
    path, truth = demo_field("tris_ring_a")
    assert window.open_path(str(path))
    window.canvas.fit_to_window()
    panel = next(p for p in window.panels if isinstance(p, LightPanel))
    for x, y in ring_points(truth):
        click_image(qtbot, window, x, y)
    type_into(qtbot, window, "z_l", str(truth["z_l"]))
    type_into(qtbot, window, "z_s", str(truth["z_s"]))
    wait_for_result(qtbot, window)
    wait_idle(qtbot, window)
    panel.source.setCurrentIndex(panel.source.findData("image"))
    _type(qtbot, panel, "zeropoint_key", "MAGZERO")
    _type(qtbot, panel, "arc_width", "6")
    panel.band.setCurrentText("sdss_r")
    qtbot.mouseClick(panel.run_button, Qt.LeftButton)
    qtbot.waitUntil(lambda: panel.light_result is not None or "must" in panel.status.text(), timeout=20000)
    light = panel.light_result
    assert light is not None, panel.status.text()
    phot = light["light_photometry"]
    assert phot["exptime_s"] == 1.0 and "BUNIT" in phot["exptime_source"]  # the image is in counts/s
    # Reference: the truth file's lens light (elliptical Sersic, n = 4) rendered with astropy's Sersic2D
    # and summed by photutils in a circle of the fitted theta_E, without PSF; the PSF (0.8" FWHM)
    # moves some light out, so the magnitudes agree to 0.1 mag (m = ZP - 2.5 log10 F, common practice).
    from photutils.aperture import CircularAperture, aperture_photometry
    from scipy import special

    lens = truth["lens_light_model"][0]
    n, r_e_pix = lens["n"], lens["r_eff_arcsec"] / truth["pixel_scale_arcsec"]
    b_n = special.gammaincinv(2 * n, 0.5)
    q = lens["axis_ratio"]
    i_e = lens["total_flux"] / (2 * np.pi * n * q * r_e_pix**2 * np.exp(b_n) * b_n ** (-2 * n) * special.gamma(2 * n))
    model = Sersic2D(amplitude=i_e, r_eff=r_e_pix, n=n, x_0=truth["center_x"], y_0=truth["center_y"], ellip=1 - q,
                     theta=np.radians(lens["angle_deg"]))
    ny, nx = window.model.image.data.shape
    rendered = discretize_model(model, (0, nx), (0, ny), mode="oversample", factor=10)
    radius_pix = window.model.fit.a_px
    intrinsic = aperture_photometry(rendered, CircularAperture((truth["center_x"], truth["center_y"]), radius_pix))
    expected_mag = truth["zeropoint_ab"] - 2.5 * np.log10(float(intrinsic["aperture_sum"][0]))
    assert phot["aperture_mag"] == pytest.approx(expected_mag, abs=0.1)
    assert panel.values["light_luminosity_lsun"].text() not in ("", "–")
