"""The task runner: a window deleted while its background task still runs must not kill the program."""

from __future__ import annotations

import time

import pytest

pytest.importorskip("PySide6")


def test_deleting_the_owner_of_a_running_task_is_safe(qtbot):
    from PySide6.QtWidgets import QWidget

    from lensmass.gui import workers

    owner = QWidget()
    runner = workers.TaskRunner(owner)

    def slow(progress, should_stop):
        for _ in range(25):
            if should_stop():
                return None
            time.sleep(0.02)
        return 1

    thread = runner.start(slow, "slow task", lambda value: None)
    assert thread is not None and thread in workers._RUNNING
    owner.deleteLater()  # as pytest-qt or Qt does with a closed window
    del owner, runner, thread
    qtbot.waitUntil(lambda: not workers._RUNNING, timeout=5000)  # the thread ends and is released
