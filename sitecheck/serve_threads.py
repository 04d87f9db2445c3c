"""Request threads for gunicorn's threaded worker: the thread that went idle last takes the
next request.

gunicorn hands each request to a ``concurrent.futures.ThreadPoolExecutor``, whose idle
threads wait in turn: once a worker has started its threads (any two requests at once do
it), one phone's requests one after another go round all of them, and each starts on a
thread whose stack and frames the processor has long forgotten. A phone's outbox sending
records one after another paid about 0.15 ms of CPU per record for it in-process, about a
tenth of the request (benchmarks/write_path.py and large_site.py --only writes). Here the
most recently idle thread is woken, so work one after another stays on one warm thread,
and the others only start when requests overlap.

What gunicorn asks of the pool (``submit`` returning a future, ``shutdown``) is what
ThreadPoolExecutor gives: every task runs once, its result or exception on its future;
at most ``max_workers`` threads; tasks beyond that wait and run in the order sent; after
``shutdown`` nothing new is taken, and what was taken still runs. One difference: its
threads are daemons (see ``submit``).
"""

from __future__ import annotations

import threading
from collections import deque
from collections.abc import Callable
from concurrent.futures import Future
from typing import Any

__all__ = ["LastIdleFirstPool"]

_Task = tuple[Future, Callable[..., Any], tuple[Any, ...], dict[str, Any]]


class _Idle:
    """A thread waiting for work: woken with a task, or with None to end."""

    def __init__(self) -> None:
        self.woken = threading.Event()
        self.task: _Task | None = None


class LastIdleFirstPool:
    """A thread pool that gives each task to the thread that became idle last."""

    def __init__(self, max_workers: int, name: str = "sitecheck-request") -> None:
        if max_workers < 1:
            raise ValueError(f"max_workers {max_workers}: at least one thread is needed")
        self._max = max_workers
        self._name = name
        self._lock = threading.Lock()
        self._idle: list[_Idle] = []  # a stack: the last to go idle is woken first
        self._waiting: deque[_Task] = deque()  # sent while every thread was busy
        self._threads: list[threading.Thread] = []
        self._shut = False

    def submit(self, fn: Callable[..., Any], /, *args: Any, **kwargs: Any) -> Future:
        future: Future = Future()
        task: _Task = (future, fn, args, kwargs)
        with self._lock:
            if self._shut:
                raise RuntimeError("cannot take new work after shutdown")
            if self._idle:
                idle = self._idle.pop()
                idle.task = task
                idle.woken.set()
            elif len(self._threads) < self._max:
                # Daemon threads: a worker that ends on a path that never shut the pool
                # down (an error in gunicorn's loop) must not hang on its idle threads.
                # On the usual path gunicorn has waited for every request to end first,
                # and a record cut short by a dying process is rolled back by SQLite and
                # sent again by the phone, which never heard an answer.
                thread = threading.Thread(
                    target=self._work,
                    args=(task,),
                    name=f"{self._name}-{len(self._threads) + 1}",
                    daemon=True,
                )
                self._threads.append(thread)
                thread.start()
            else:
                self._waiting.append(task)
        return future

    def shutdown(self, wait: bool = True, *, cancel_futures: bool = False) -> None:
        with self._lock:
            self._shut = True
            if cancel_futures:
                while self._waiting:
                    self._waiting.popleft()[0].cancel()
            for idle in self._idle:
                idle.task = None
                idle.woken.set()
            self._idle.clear()
            threads = list(self._threads)
        if wait:
            for thread in threads:
                thread.join()

    @property
    def thread_count(self) -> int:
        return len(self._threads)

    @property
    def idle_count(self) -> int:
        return len(self._idle)

    def _work(self, task: _Task | None) -> None:
        idle = _Idle()
        while task is not None:
            _run(task)
            task = None
            with self._lock:
                if self._waiting:
                    task = self._waiting.popleft()
                    continue
                if self._shut:
                    return
                idle.woken.clear()
                idle.task = None
                self._idle.append(idle)
            idle.woken.wait()
            task = idle.task


def _run(task: _Task) -> None:
    future, fn, args, kwargs = task
    if not future.set_running_or_notify_cancel():
        return
    try:
        result = fn(*args, **kwargs)
    except BaseException as error:  # as ThreadPoolExecutor: the future carries it
        future.set_exception(error)
    else:
        future.set_result(result)
