"""Serving the app with waitress (pure Python), on this machine unless told otherwise.

Two rules shape it:

- Outside team mode whyfired has no sign-in, so it listens on a loopback address unless
  ``ALLOW_REMOTE`` is set: anyone who can reach the port could read and change every
  review. Team mode, where everyone signs in, may listen anywhere.
- Analyses (the Explain screen, its peers panel and figures, a rule's replay, exports)
  cost seconds of CPU; light pages cost milliseconds. :class:`HeavyGate` lets at most
  ``HEAVY_WORKERS`` analyses run at once and keeps a share of the server's threads free
  of analyses altogether, so lists, forms and saves keep answering while analyses queue.
"""

from __future__ import annotations

import ipaddress
import re
import socket
import threading
from collections.abc import Callable, Iterable
from typing import Any

from flask import Flask

from webapp.web.security import HEADERS

HEAVY_PATH = re.compile(
    r"^/(explain(/|$)|screening(/|$)|pages/\d+/explain|rules/\d+/(replay|kinds)|reviews/\d+/export\.|"
    r"explanations/\d+(/figure/|/data\.|$))"
)
READING_METHODS = frozenset({"GET", "HEAD"})


class RemoteAddressRefused(ValueError):
    """Asked to listen on an address other machines can reach without ``ALLOW_REMOTE``."""


def is_loopback(host: str) -> bool:
    """Whether every address ``host`` names is on this machine only."""
    name = host.strip("[]")
    try:
        return ipaddress.ip_address(name).is_loopback
    except ValueError:
        pass
    try:
        infos = socket.getaddrinfo(name, None)
    except OSError:
        return False
    return bool(infos) and all(ipaddress.ip_address(info[4][0]).is_loopback for info in infos)


def check_address(host: str, allow_remote: bool) -> None:
    if allow_remote or is_loopback(host):
        return
    raise RemoteAddressRefused(
        f"refusing to listen on {host}: without team mode whyfired has no sign-in, so anyone "
        "who can reach that address could read and change every review. Listen on 127.0.0.1 "
        "(the default); for a team, serve a PostgreSQL store with --team (everyone signs "
        "in); or, to share it on purpose with people on a network you trust, set "
        "WHYFIRED_ALLOW_REMOTE=1 and list the names they will use in WHYFIRED_ALLOWED_HOSTS."
    )


def check_port_free(host: str, port: int) -> None:
    """Raise OSError when ``host:port`` cannot be listened on (taken, or not ours), before
    minutes of work that would end in that error."""
    family = socket.AF_INET6 if ":" in host.strip("[]") else socket.AF_INET
    with socket.socket(family, socket.SOCK_STREAM) as probe:
        # As the server itself will: a port left in TIME_WAIT is free, one listened on is not.
        probe.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        probe.bind((host.strip("[]"), port))


def light_thread_share(threads: int) -> int:
    """Threads kept free of analyses: a quarter of them, at least two."""
    return max(2, threads // 4)


class HeavyGate:
    """WSGI middleware bounding the analyses that run, and the threads they may hold."""

    def __init__(self, app: Callable[..., Any], workers: int, threads: int):
        self.app = app
        self.running = threading.BoundedSemaphore(max(1, workers))
        self.max_in_flight = max(1, threads - light_thread_share(threads))
        self.in_flight = 0
        self.lock = threading.Lock()

    def __call__(self, environ: dict, start_response: Callable[..., Any]) -> Iterable[bytes]:
        heavy = environ.get("REQUEST_METHOD") in READING_METHODS and HEAVY_PATH.match(
            environ.get("PATH_INFO", "")
        )
        if not heavy:
            return self.app(environ, start_response)
        with self.lock:
            if self.in_flight >= self.max_in_flight:
                return self._busy(start_response)
            self.in_flight += 1
        try:
            with self.running:
                body = self.app(environ, start_response)
                # Build the whole answer inside the gate; a lazy body would escape it.
                chunks = list(body)
                close = getattr(body, "close", None)
                if close is not None:
                    close()
                return chunks
        finally:
            with self.lock:
                self.in_flight -= 1

    def _busy(self, start_response: Callable[..., Any]) -> list[bytes]:
        body = (
            b"whyfired is busy with other analyses right now; nothing was changed. "
            b"Try again in a few seconds."
        )
        headers = [("Content-Type", "text/plain; charset=utf-8"), ("Retry-After", "5")]
        headers += [(name, value) for name, value in HEADERS.items()]
        start_response("503 Service Unavailable", headers + [("Content-Length", str(len(body)))])
        return [body]


def make_server(app: Flask, host: str, port: int) -> Any:
    """A waitress server for ``app``, bound but not yet running (``.run()`` to serve)."""
    import waitress

    check_address(host, bool(app.config.get("ALLOW_REMOTE") or app.config.get("TEAM_MODE")))
    if not is_loopback(host) and host not in ("0.0.0.0", "::", ""):
        extra = app.config.get("ALLOWED_HOSTS") or ""
        app.config["ALLOWED_HOSTS"] = f"{extra},{host.strip('[]')}".strip(",")
    threads = int(app.config["SERVER_THREADS"])
    gate = HeavyGate(app, workers=int(app.config["HEAVY_WORKERS"]), threads=threads)
    return waitress.create_server(gate, host=host, port=port, threads=threads, ident="whyfired")


def address_for_people(host: str, port: int) -> str:
    name = f"[{host}]" if ":" in host and not host.startswith("[") else host
    return f"http://{name}:{port}/"
