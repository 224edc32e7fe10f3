"""A real file dialog in the manifest's folder does not cost a grade (SQLite store and PostgreSQL spool).

Qt's file dialog opens and closes the files it lists (to tell their type), which drops the process's POSIX
locks on the grade store (SQLite documentation, "How To Corrupt An SQLite Database File", section 2.2).
Sequence: a grade; a file dialog shows the folder and closes; an outside process connects and disconnects;
a second grade; an outside reader must see both.
"""

from __future__ import annotations

import pytest

pytest.importorskip("PySide6")

from tests.io.test_store_locks import outside_count, store_and_file  # noqa: E402


def show_file_dialog(qtbot, folder) -> None:
    from PySide6.QtWidgets import QFileDialog

    dialog = QFileDialog(None, "Save session", str(folder))
    dialog.setOption(QFileDialog.DontUseNativeDialog, True)
    qtbot.addWidget(dialog)
    dialog.show()
    qtbot.wait(1500)  # lets the dialog list the folder and look at each file
    dialog.reject()
    qtbot.wait(50)


@pytest.mark.parametrize("backend", ["sqlite", "postgresql spool"])
def test_a_file_dialog_in_the_manifest_folder_loses_no_grade(qtbot, tmp_path, backend):
    store, db = store_and_file(tmp_path, backend)
    store.add_grade("A", 1)
    show_file_dialog(qtbot, tmp_path)
    assert outside_count(db) == 1
    store.add_grade("B", 3)
    assert outside_count(db) == 2
    store.close()
