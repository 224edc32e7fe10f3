"""The short help page of the window: how to measure, the methods and their references."""

from __future__ import annotations

SHORTCUTS = [
    ("Ctrl+O", "open an image or session"),
    ("Ctrl+S / Ctrl+Shift+S", "save the session / save as"),
    ("Ctrl+Z / Ctrl+Shift+Z or Ctrl+Y", "undo / redo any edit"),
    ("A", "tool: add arc points"),
    ("I", "tool: mark images of a multiple-image system"),
    ("C", "tool: set the lens centre"),
    ("N", "new arc system"),
    ("Backspace", "delete the last mark of the selected system"),
    ("R", "snap clicks onto the arc ridge (on/off)"),
    ("Ctrl+F", "find the ring automatically"),
    ("Ctrl+L", "fit the lens light (then view the residual)"),
    ("F / 1", "fit the image to the window / one image pixel per screen pixel"),
    ("+ / -", "zoom in / out (or the mouse wheel, around the cursor)"),
    ("L", "cycle image / lens-light model / residual"),
    ("G", "loupe: the pixels under the cursor enlarged, with a cross-hair (on/off)"),
    ("right-button drag", "on the image: sideways for brightness, up and down for contrast"),
    ("Ctrl+Shift+C", "copy the results as text"),
    ("P", "copy the RA, Dec under the cursor (right-click the read-out for degrees or pixels)"),
    ("Ctrl+E / Ctrl+Shift+E", "export the report (PDF/PNG) / the results (JSON/ECSV)"),
    ("F1", "this page"),
]


def _triage_html() -> str:
    """The grade scale and the keys of the triage queue (from the store and the panel: one source)."""
    from html import escape

    from lensmass.gui.triage_panel import TRIAGE_KEYS
    from lensmass.io.store import GRADE_SCALE

    grades = "".join(f"<tr><td><b>{g}</b></td><td>{escape(name)}</td><td>{escape(meaning)}</td></tr>"
                     for g, (name, meaning) in GRADE_SCALE.items())
    keys = "".join(f"<tr><td><b>{escape(k)}</b></td><td>{escape(v)}</td></tr>" for k, v in TRIAGE_KEYS)
    return f"""
<h3>Triage queue</h3>
<p>Open a folder of images or a manifest in the <i>Triage queue</i> dock and step through the candidates.
Grades name what is seen, not a probability:</p>
<table cellspacing="4"><tr><td><i>grade</i></td><td><i>name</i></td><td><i>meaning</i></td></tr>{grades}</table>
<p>Keys, with the candidate list focused:</p>
<table cellspacing="4">{keys}</table>
<p>A candidate you measured before opens again with your stored marks and redshifts.</p>
"""


def help_html() -> str:
    rows = "".join(f"<tr><td><b>{k}</b></td><td>{v}</td></tr>" for k, v in SHORTCUTS)
    return f"""
<h2>Measuring a lens by hand</h2>
<ol>
<li>Open an image (FITS with a WCS, or a picture plus its pixel scale). It opens fitted to the window;
when a bright galaxy sits at its centre, its light is fitted in the background and the residual is
shown, where the arcs stand out (turn this off in the Measure menu).</li>
<li>With the <b>arc point</b> tool, click along the arc or ring; drag a mark to move it, right-click
to delete it. The dashed circle (or ellipse) is the fit, updated as you edit, with theta_E beside it.</li>
<li>Optionally set the <b>lens centre</b> (the fit then holds it), mark the <b>images</b> of a
multiple-image system, and add further <b>arc systems</b>, each with its own source redshift.</li>
<li>Type z_l and z_s (with their 1-sigma errors) in <i>Lens &amp; source</i>. The <i>Mass budget</i>
lists every number with its 68% interval; hover over a row to see which model produced it.</li>
</ol>
<h3>Methods</h3>
<ul>
<li><b>theta_E</b>: a geometric least-squares circle through the marks (algebraic start, Kasa 1976;
geometric refinement and covariance, Chernov 2010), or an ellipse (Halir &amp; Flusser 1998) with
theta_E = sqrt(a b); for two images, half their separation (SIS). Click precision is taken as half a
pixel, or the scatter of the marks when larger.</li>
<li><b>Distances</b>: angular-diameter distances in the chosen cosmology (astropy; Hogg 1999,
arXiv:astro-ph/9905116).</li>
<li><b>Sigma_cr</b> = c<sup>2</sup> D_s / (4 pi G D_l D_ls) and <b>M(&lt;theta_E)</b> = pi Sigma_cr
(D_l theta_E)<sup>2</sup>: the projected mass inside the Einstein radius, nearly independent of the
mass model for a round lens (Narayan &amp; Bartelmann 1996, arXiv:astro-ph/9606001).</li>
<li><b>sigma_SIS</b>: the velocity dispersion of the singular isothermal sphere with this Einstein
radius, theta_E = 4 pi (sigma/c)<sup>2</sup> D_ls / D_s. A model number, not a measured dispersion.</li>
<li><b>NFW M200, c200, r200</b>: the NFW halo (Navarro, Frenk &amp; White 1997; lensing by Wright &amp;
Brainerd 2000) whose mean convergence inside theta_E is 1, with c(M, z) from Duffy et al. (2008) or
Dutton &amp; Maccio (2014). For a galaxy-scale lens a halo alone overestimates the mass: the stars
are missing from that model.</li>
<li><b>Intervals</b>: Monte Carlo over the errors of theta_E, z_l and z_s (fixed seed, reproducible);
68% intervals are the 16th-84th percentiles of the draws.</li>
<li><b>Display</b>: astropy.visualization stretches and intervals (zscale as in IRAF); colour maps
from matplotlib; or <i>manual</i> limits typed beside the colour bar (saved with the session).
Display changes never touch the measurement.</li>
</ul>
<h3>Keys</h3>
<table cellspacing="4">{rows}</table>
{_triage_html()}
<p>Every number is a model-dependent estimate; the exported report and results name the model and
assumptions behind each one.</p>
"""
