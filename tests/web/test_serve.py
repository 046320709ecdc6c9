"""The production server: waitress on loopback, analyses bounded, light pages kept free."""

from __future__ import annotations

import contextlib
import threading
import time
import urllib.request

import pytest

from webapp.serve import (
    HeavyGate,
    RemoteAddressRefused,
    check_address,
    is_loopback,
    make_server,
)


class SlowApp:
    """A WSGI app whose answers wait for ``release``; it counts how many run at once."""

    def __init__(self):
        self.release = threading.Event()
        self.running = 0
        self.most = 0
        self.lock = threading.Lock()

    def __call__(self, environ, start_response):
        with self.lock:
            self.running += 1
            self.most = max(self.most, self.running)
        if environ["PATH_INFO"].startswith("/explain"):
            self.release.wait(10)
        with self.lock:
            self.running -= 1
        start_response("200 OK", [("Content-Type", "text/plain")])
        return [b"ok"]


def call(gate, path: str, results: list, method: str = "GET") -> None:
    statuses = []
    body = gate({"PATH_INFO": path, "REQUEST_METHOD": method}, lambda s, h: statuses.append(s))
    results.append((statuses[0], b"".join(body)))


def test_at_most_the_set_number_of_analyses_run_and_light_pages_still_answer():
    app = SlowApp()
    gate = HeavyGate(app, workers=2, threads=16)
    results: list = []
    heavy = [
        threading.Thread(target=call, args=(gate, "/explain/peers", results)) for _ in range(6)
    ]
    for thread in heavy:
        thread.start()
    time.sleep(0.3)
    light: list = []
    call(gate, "/reviews", light)  # answered while six analyses wait or run
    call(gate, "/explain/save", light, method="POST")  # a save is never held by analyses
    assert [status for status, _ in light] == ["200 OK", "200 OK"]
    app.release.set()
    for thread in heavy:
        thread.join(10)
    assert len(results) == 6 and {status for status, _ in results} == {"200 OK"}
    assert app.most <= 3  # two analyses plus the light requests above


def test_analyses_beyond_their_share_of_threads_are_told_to_retry():
    app = SlowApp()
    gate = HeavyGate(app, workers=1, threads=4)  # two threads for analyses, two kept light
    results: list = []
    waiting = [threading.Thread(target=call, args=(gate, "/explain", results)) for _ in range(2)]
    for thread in waiting:
        thread.start()
    time.sleep(0.3)
    refused: list = []
    call(gate, "/explain", refused)
    assert refused[0][0].startswith("503") and b"busy with other analyses" in refused[0][1]
    app.release.set()
    for thread in waiting:
        thread.join(10)
    assert [status for status, _ in results] == ["200 OK", "200 OK"]


@pytest.mark.parametrize("host", ["127.0.0.1", "::1", "localhost", "[::1]"])
def test_loopback_addresses_are_accepted(host):
    assert is_loopback(host)
    check_address(host, allow_remote=False)


@pytest.mark.parametrize("host", ["0.0.0.0", "::", "192.0.2.10"])
def test_other_addresses_need_the_setting(host):
    with pytest.raises(RemoteAddressRefused, match="has no sign-in"):
        check_address(host, allow_remote=False)
    check_address(host, allow_remote=True)


def test_waitress_serves_the_app_with_its_headers(app):
    server = make_server(app, "127.0.0.1", 0)

    def run() -> None:
        # The loop notices its socket was closed under it: that is how it stops.
        with contextlib.suppress(OSError):
            server.run()

    thread = threading.Thread(target=run, daemon=True)
    thread.start()
    try:
        url = f"http://127.0.0.1:{server.effective_port}/reviews"
        with urllib.request.urlopen(url, timeout=10) as response:
            assert response.status == 200
            assert response.headers["Server"] == "whyfired"
            assert "frame-ancestors 'none'" in response.headers["Content-Security-Policy"]
    finally:
        server.close()
        thread.join(5)


def test_team_mode_may_listen_on_an_address_others_can_reach(app) -> None:
    """Everyone signs in in team mode, so the loopback rule does not apply to it."""
    with pytest.raises(RemoteAddressRefused):
        make_server(app, "0.0.0.0", 0)
    app.config["TEAM_MODE"] = True
    make_server(app, "0.0.0.0", 0).close()
