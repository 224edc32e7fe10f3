"""The class summary points the TA at the right mistake: per student, counted by students, missing answers.

Expected and mistaken answers are computed here with astropy distances and constants from the formulas of
Narayan & Bartelmann (1996): Sigma_cr = c^2 D_s / (4 pi G D_l D_ls), M = pi Sigma_cr (D_l theta_E)^2,
theta_E = 4 pi (sigma/c)^2 D_ls/D_s; a dropped h^-1 multiplies every distance by h (common practice).
"""

import numpy as np
import astropy.units as u
from astropy.constants import G, c
from astropy.cosmology import FlatLambdaCDM

from lensmass.cli import main
from lensmass.io.grading_report import grade_class, summary_counts, summary_html, summary_sentence

COSMO = FlatLambdaCDM(H0=70, Om0=0.3)
THETA, ZL, ZS = 1.5, 0.35, 1.4
COLUMNS = ["mass_einstein_msun", "r_e_kpc", "sis_sigma_v_kms", "sigma_cr_msun_per_pc2", "d_l_mpc", "d_s_mpc",
           "d_ls_mpc"]


def answers(h=1.0, theta_factor=1.0, dls_is_ds=False):
    d_l = COSMO.angular_diameter_distance(ZL) * h
    d_s = COSMO.angular_diameter_distance(ZS) * h
    d_ls = d_s if dls_is_ds else COSMO.angular_diameter_distance(ZL, ZS) * h
    theta = np.deg2rad(THETA * theta_factor / 3600)
    sigma_cr = (c**2 / (4 * np.pi * G) * d_s / (d_l * d_ls)).to_value(u.Msun / u.pc**2)
    mass = (c**2 / (4 * G) * d_l * d_s / d_ls * theta**2).to_value(u.Msun)
    sigma = (c * np.sqrt(theta * d_s / (4 * np.pi * d_ls))).to_value(u.km / u.s)
    return dict(zip(COLUMNS, [mass, (d_l * theta).to_value(u.kpc), sigma, sigma_cr, d_l.to_value(u.Mpc),
                              d_s.to_value(u.Mpc), d_ls.to_value(u.Mpc)]))


def write(path):
    h = COSMO.h
    rows = {
        "ana": answers(),                     # all right
        "hal": answers(h=h),                  # dropped h^-1 everywhere: six wrong answers, one slip
        "dia": answers(theta_factor=2.0),     # the ring's diameter
        "dsl": answers(dls_is_ds=True),       # D_s for D_ls
    }
    lines = ["student,theta_e_arcsec,z_l,z_s," + ",".join(COLUMNS)]
    for name, a in rows.items():
        cells = [f"{a[q]:.7g}" for q in COLUMNS]
        if name == "ana":
            cells[COLUMNS.index("d_ls_mpc")] = ""  # a missing answer
        lines.append(f"{name},{THETA},{ZL},{ZS}," + ",".join(cells))
    path.write_text("\n".join(lines) + "\n")


def test_mistakes_are_counted_by_students_and_ambiguous_matches_once(tmp_path):
    write(tmp_path / "class.csv")
    report = grade_class(tmp_path / "class.csv", COSMO)
    hal_mass = next(r for r in report if r["student"] == "hal" and r["quantity"] == "mass_einstein_msun")
    # at this lens a dropped h and D_s-for-D_ls give Einstein masses 4% apart: the answer matches both
    assert set(hal_mass["mistakes"]) >= {"h_dropped", "ds_for_dls"}
    s = summary_counts(report)
    by = {x.student: x for x in s["summaries"]}
    assert by["hal"].explanation == ("h_dropped",) and by["hal"].explained == len(by["hal"].failed) == 6
    assert by["hal"].passed == ("sis_sigma_v_kms",)  # sigma_SIS does not depend on h
    assert by["dia"].explanation == ("diameter_for_radius",)
    assert by["dsl"].explanation == ("ds_for_dls",)
    counts = dict(s["mistakes"])
    # one student each; hal's ambiguous mass answer does not add to D_s-for-D_ls
    assert counts == {("h_dropped",): 1, ("diameter_for_radius",): 1, ("ds_for_dls",): 1}
    assert by["ana"].missing == ("d_ls_mpc",) and not by["ana"].failed
    line = summary_sentence(report)
    assert line.startswith("4 students, 27 answers:") and "1 missing" in line
    assert "(1 student each)" in line and "1 students" not in line


def test_summary_page_lists_students_their_mistake_and_missing_answers(tmp_path, capsys):
    write(tmp_path / "class.csv")
    assert main(["grade", str(tmp_path / "class.csv"), "--out", str(tmp_path / "r.csv"),
                 "--h0", "70", "--om0", "0.3"]) == 0
    page = (tmp_path / "r.html").read_text()
    assert "<h2>By student</h2>" in page
    assert "<td>hal</td><td class='num'>1</td><td class='num'>6</td><td></td><td>dropped the h^-1" in page
    assert "(6 of 6 failed)" in page
    assert "<td>ana</td><td class='num'>6</td><td class='num'>0</td><td>d_ls_mpc</td>" in page
    assert "1 student answered everything" not in page and "0 students answered everything" in page
    csv_text = (tmp_path / "r.csv").read_text()
    assert "ana,d_ls_mpc,,,,missing,no answer was submitted" in csv_text
    assert "most common mistakes (1 student each)" in capsys.readouterr().out


def test_one_student_is_singular(tmp_path):
    (tmp_path / "one.csv").write_text(f"student,theta_e_arcsec,z_l,z_s,r_e_kpc\nsolo,{THETA},{ZL},{ZS},"
                                      f"{answers(theta_factor=2.0)['r_e_kpc']:.7g}\n")
    report = grade_class(tmp_path / "one.csv", COSMO)
    assert summary_sentence(report).startswith("1 student, 1 answer: 0 pass, 1 fail; most common mistake "
                                               "(1 student): used the ring's diameter")
    assert "1 student," in summary_html(report, title="t", cosmology="c", tolerance=0.05)
