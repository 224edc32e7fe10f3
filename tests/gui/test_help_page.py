"""The window's help page lists the triage grade scale and keys beside the methods (offscreen Qt)."""

import pytest

pytest.importorskip("PySide6")


def test_help_page_shows_triage_grades_and_keys(window, qtbot):
    window.act_help.trigger()  # Help > Methods and keys (F1)
    from PySide6.QtWidgets import QTextBrowser

    browser = window.help_dialog.findChild(QTextBrowser, "help_browser")
    text = browser.toPlainText()
    # The grade scale as the README and the store define it (our own scale; common practice in lens
    # searches is a few visual grades, the names and meanings here are the project's).
    for grade, name, meaning in ((0, "empty", "no lensing feature"), (1, "lone feature", "no counter-image seen"),
                                 (2, "counter-imaged", "plausible counter-image"),
                                 (3, "measurable", "explained by one lens")):
        assert f"\n{grade}\n{name}\n" in text  # one table row: grade, name, meaning
        after = text.split(f"\n{grade}\n{name}\n", 1)[1].splitlines()[0]
        assert meaning in after
    # the triage keys of the candidate list
    assert "Triage queue" in text
    for key, what in ((".", "next candidate"), (",", "previous candidate"), ("F", "flag"), ("N", "write a note"),
                      ("M", "store the window's measurement")):
        assert f"\n{key}\n{what}" in text, key
    # the methods and references are still there
    assert "Narayan & Bartelmann 1996" in text and "Duffy et al. (2008)" in text
