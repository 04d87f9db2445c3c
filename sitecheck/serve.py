"""Serving sitecheck: several worker processes, one per core by default.

gunicorn runs the workers (each with a few threads, so a photo upload does not hold up a
page). Nothing a worker keeps in its own memory decides anything another worker must agree
with: sessions, log-in throttling, background jobs and the one-record-per-site rule live in
the database or the data folder, which every worker shares.

Where there is no ``fork`` (Windows) waitress serves with threads in one process.
"""

from __future__ import annotations

import os
import sys

from sitecheck import logs
from sitecheck.config import Settings

__all__ = ["serve", "where_data_is"]


def where_data_is(settings: Settings) -> str:
    return (
        f"data folder {settings.home}\n"
        f"  database {settings.database}\n"
        f"  photos   {settings.photos}\n"
        f"  records  {settings.records}\n"
        f"  key      {'from the settings' if settings.secret_key else settings.secret_key_file}"
    )


def serve(settings: Settings, *, server: str = "auto") -> int:
    """Serve on ``settings.host``:``settings.port`` until stopped (Ctrl-C or SIGTERM)."""
    if server == "auto":
        server = "gunicorn" if hasattr(os, "fork") else "waitress"
    logs.setup(json_lines=settings.log_json)
    from sitecheck.web import create_app

    # Once here, before any worker starts: migrate the database, make the key, sweep what
    # a crash left; and fail at once, in the terminal, if the settings cannot be used.
    # No mail sender here: the workers (or waitress's app below) send; a thread in the
    # process that forks the workers would be copied into none of them.
    app = create_app(settings=settings, MAIL_SENDER=False)
    if server == "waitress":
        app = create_app(settings=settings)
        from waitress import serve as waitress_serve

        _settle_memory()
        waitress_serve(
            app,
            host=settings.host,
            port=settings.port,
            threads=settings.threads,
            ident="sitecheck",
        )
        return 0
    del app  # each worker builds its own after the fork: no connection or thread crosses it
    _Gunicorn(settings).run()
    return 0


def _settle_memory() -> None:
    """What the app built to serve (modules, templates, routes) lives as long as the worker:
    move it out of the garbage collector's sight, so that a request making thousands of
    objects (a long list, a site pack) does not also pay for walking all of it again. The
    review queue of a 10,000-bearing site took 15 % less CPU (benchmarks/large_site.py)."""
    import gc

    gc.collect()
    gc.freeze()


def _gunicorn_logger_class(json_lines: bool):
    from gunicorn.glogging import Logger

    class SitecheckLog(Logger):
        """gunicorn's own messages (workers started, stopped, timed out) in sitecheck's
        shape, on stderr; the per-request line is sitecheck's, so gunicorn's is off."""

        def setup(self, cfg):
            super().setup(cfg)
            self.error_log.handlers.clear()
            logs.setup(json_lines=json_lines)

    return SitecheckLog


class _Gunicorn:
    def __init__(self, settings: Settings):
        from gunicorn.app.base import BaseApplication

        outer = self
        self.settings = settings

        class App(BaseApplication):
            def load_config(self):
                s = outer.settings
                options = {
                    "bind": f"{s.host}:{s.port}",
                    "workers": s.worker_count(),
                    "worker_class": _thread_worker_class(),
                    "threads": s.threads,
                    # A site record made inside its request can take tens of seconds.
                    "timeout": 120,
                    "graceful_timeout": 30,
                    "accesslog": None,
                    "errorlog": "-",
                    "loglevel": "info",
                    "logger_class": _gunicorn_logger_class(s.log_json),
                    "proc_name": "sitecheck",
                    "preload_app": False,
                    # gunicorn's control socket sits in the user's home by default, where two
                    # servers on one machine would take each other's; nothing here uses it.
                    "control_socket_disable": True,
                    "post_worker_init": _worker_logs(s.log_json),
                }
                for key, value in options.items():
                    if key in self.cfg.settings:  # control_socket_* exist from gunicorn 25 on
                        self.cfg.set(key, value)

            def load(self):
                from sitecheck.photos.ingest import share_cores_with
                from sitecheck.web import create_app

                # Each worker takes its share of the cores for pictures: one per core in all.
                share_cores_with(outer.settings.worker_count())
                app = create_app(settings=outer.settings, SWEEP_AT_START=False)
                _settle_memory()
                return app

        # gunicorn would read sys.argv as its own command line.
        argv, sys.argv = sys.argv, sys.argv[:1]
        try:
            self._app = App()
        finally:
            sys.argv = argv

    def run(self) -> None:
        self._app.run()


def _thread_worker_class():
    """gunicorn's threaded worker, its requests handed to the thread that went idle last
    (sitecheck.serve_threads says why)."""
    from gunicorn.workers.gthread import ThreadWorker

    from sitecheck.serve_threads import LastIdleFirstPool

    class WarmThreadWorker(ThreadWorker):
        def get_thread_pool(self):
            return LastIdleFirstPool(max_workers=self.cfg.threads)

    return WarmThreadWorker


def _worker_logs(json_lines: bool):
    def post_worker_init(_worker) -> None:
        logs.setup(json_lines=json_lines)

    return post_worker_init
