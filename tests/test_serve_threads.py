"""The request threads' pool (sitecheck.serve_threads): everything gunicorn relies on from
ThreadPoolExecutor, and work one after another kept on the thread that went idle last.
Real threads; every wait is bounded."""

from __future__ import annotations

import threading
import time
from concurrent.futures import CancelledError

import pytest

from sitecheck.serve_threads import LastIdleFirstPool

WAIT_S = 10


@pytest.fixture
def pool():
    made = LastIdleFirstPool(max_workers=4)
    yield made
    _shut_down(made)


def _shut_down(pool: LastIdleFirstPool) -> None:
    """Shut the pool down and see every thread of it end (bounded: a bug fails, not hangs)."""
    pool.shutdown(wait=False)
    for thread in _threads():
        thread.join(WAIT_S)
    assert not [t.name for t in _threads() if t.is_alive()]


def _all_idle(pool: LastIdleFirstPool) -> None:
    deadline = time.monotonic() + WAIT_S
    while pool.idle_count < pool.thread_count:
        assert time.monotonic() < deadline, "a thread never went idle"
        time.sleep(0.001)


def _threads() -> list[threading.Thread]:
    return [t for t in threading.enumerate() if t.name.startswith("sitecheck-request")]


def _fill(pool: LastIdleFirstPool, count: int) -> None:
    """Start ``count`` threads at once (as overlapping requests do), and let them go idle."""
    started, go = threading.Barrier(count + 1), threading.Event()

    def hold():
        started.wait(WAIT_S)
        go.wait(WAIT_S)

    futures = [pool.submit(hold) for _ in range(count)]
    started.wait(WAIT_S)
    go.set()
    for future in futures:
        future.result(WAIT_S)


def test_work_one_after_another_stays_on_the_thread_that_went_idle_last(pool):
    _fill(pool, 4)
    assert pool.thread_count == 4
    used = set()
    for _ in range(40):
        _all_idle(pool)  # as when a phone's next request arrives over the network
        used.add(pool.submit(threading.get_ident).result(WAIT_S))
    assert len(used) == 1


def test_each_task_runs_once_with_its_result_or_its_exception_on_its_future(pool):
    runs = []
    lock = threading.Lock()

    def task(n):
        with lock:
            runs.append(n)
        if n % 7 == 0:
            raise ValueError(f"task {n} fails on purpose")
        return n * n

    futures = {n: pool.submit(task, n) for n in range(1, 60)}
    for n, future in futures.items():
        if n % 7 == 0:
            with pytest.raises(ValueError, match=f"task {n} fails"):
                future.result(WAIT_S)
        else:
            assert future.result(WAIT_S) == n * n
    assert sorted(runs) == list(range(1, 60))


def test_never_more_threads_than_asked_and_the_rest_wait_their_turn_in_order(pool):
    release = threading.Event()
    busy = [pool.submit(release.wait, WAIT_S) for _ in range(4)]
    order = []
    later = [pool.submit(order.append, n) for n in range(6)]
    time.sleep(0.05)
    assert pool.thread_count == 4
    assert order == []  # every thread busy: the six wait
    release.set()
    for future in busy + later:
        future.result(WAIT_S)
    assert order == list(range(6))
    assert pool.thread_count == 4


def test_a_done_callback_is_called_as_gunicorn_asks_it(pool):
    called = threading.Event()
    future = pool.submit(lambda: "answered")
    future.add_done_callback(lambda f: called.set() if f.result() == "answered" else None)
    assert called.wait(WAIT_S)


def test_after_shutdown_nothing_new_is_taken_and_what_was_taken_still_runs():
    pool = LastIdleFirstPool(max_workers=1)
    release = threading.Event()
    running = pool.submit(release.wait, WAIT_S)
    queued = pool.submit(lambda: "ran after shutdown")
    pool.shutdown(wait=False)
    with pytest.raises(RuntimeError, match="after shutdown"):
        pool.submit(lambda: None)
    release.set()
    assert running.result(WAIT_S) is True
    assert queued.result(WAIT_S) == "ran after shutdown"
    pool.shutdown(wait=True)
    assert not any(
        t.is_alive() for t in threading.enumerate() if t.name.startswith("sitecheck-req")
    )


def test_shutdown_may_cancel_what_waits():
    pool = LastIdleFirstPool(max_workers=1)
    release = threading.Event()
    running = pool.submit(release.wait, WAIT_S)
    queued = pool.submit(lambda: "never")
    pool.shutdown(wait=False, cancel_futures=True)
    release.set()
    assert running.result(WAIT_S) is True
    with pytest.raises(CancelledError):
        queued.result(WAIT_S)
    _shut_down(pool)


def test_idle_threads_end_at_shutdown(pool):
    _fill(pool, 3)
    assert len(_threads()) == 3
    _shut_down(pool)


def test_at_least_one_thread():
    with pytest.raises(ValueError, match="at least one thread"):
        LastIdleFirstPool(max_workers=0)
