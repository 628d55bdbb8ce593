"""The worker-thread runner: results, progress, cancel within a second, errors, joining."""

from __future__ import annotations

import threading
import time

import pytest

from clusterdesk.errors import Cancelled, InputError
from clusterdesk.gui.tasks import CANCELLED, DONE, FAILED, TaskRunner


@pytest.fixture
def runner(qtbot):
    r = TaskRunner()
    yield r
    r.shutdown()


def test_result_is_applied_on_the_gui_thread_with_progress(qtbot, runner):
    seen, applied = [], []
    runner.progressed.connect(lambda done, total: seen.append((done, total)))

    def work(progress, cancel):
        worker = threading.get_ident()
        for i in range(1, 4):
            progress(i, 3)
        return worker

    with qtbot.waitSignal(runner.finished, timeout=5000) as blocker:
        runner.start("counting", work, lambda result: applied.append((result, threading.get_ident())))
        assert runner.busy
    outcome = blocker.args[0]
    assert outcome.status == DONE and not runner.busy
    (worker_thread, applying_thread), = applied
    assert worker_thread != applying_thread == threading.get_ident()
    qtbot.waitUntil(lambda: len(seen) == 3, timeout=2000)
    assert seen == [(1, 3), (2, 3), (3, 3)]


def test_cancel_from_the_gui_thread_stops_the_work_within_a_second(qtbot, runner):
    applied = []
    started = threading.Event()

    def work(progress, cancel):
        started.set()
        while not cancel.is_set():  # the engine checks its token every EM cycle the same way
            time.sleep(0.005)
        raise Cancelled("stopped")

    runner.start("spinning", work, applied.append)
    assert started.wait(5)
    t0 = time.perf_counter()
    with qtbot.waitSignal(runner.finished, timeout=1000) as blocker:
        runner.cancel()
    assert time.perf_counter() - t0 < 1.0
    assert blocker.args[0].status == CANCELLED and applied == []


def test_a_failure_is_reported_with_its_traceback_and_nothing_applied(qtbot, runner):
    applied, errors = [], []

    def work(progress, cancel):
        raise InputError("The column holds no numbers; choose another column.")

    with qtbot.waitSignal(runner.finished, timeout=5000) as blocker:
        runner.start("failing", work, applied.append, errors.append)
    outcome = blocker.args[0]
    assert outcome.status == FAILED and applied == []
    assert isinstance(outcome.error, InputError) and "Traceback" in outcome.details
    assert errors == [outcome]


def test_a_result_arriving_after_cancel_is_discarded(qtbot, runner):
    applied = []
    release = threading.Event()

    def work(progress, cancel):  # work that cannot stop early, like reading a file
        release.wait(5)
        return "late"

    runner.start("reading", work, applied.append)
    with qtbot.waitSignal(runner.finished, timeout=5000) as blocker:
        runner.cancel()
        release.set()
    assert blocker.args[0].status == CANCELLED and applied == []


def test_one_task_at_a_time_and_shutdown_joins_the_thread(qtbot, runner):
    def work(progress, cancel):
        while not cancel.is_set():
            time.sleep(0.005)
        raise Cancelled("stopped")

    runner.start("first", work)
    with pytest.raises(RuntimeError, match="still running"):
        runner.start("second", work)
    assert runner.shutdown(timeout_ms=2000)
    assert not runner.busy
