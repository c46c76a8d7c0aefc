"""``diskexplorer demo`` as a server: port checks, culling of abandoned kernels, a clean stop.

These start the real command in a subprocess (voila and its kernels are real processes),
so they take a while; they check processes and sockets, never durations against a goal
beyond the generous limits a user would notice (a stop within 10 s, a cull within a minute).
"""
import os
import signal
import socket
import subprocess
import sys
import time
import urllib.parse
import urllib.request

import psutil
import pytest
from _processes import alive, free_port, port_open, served_address, stop_tree

from diskexplorer.cli import main
from diskexplorer.app.serving.server import (DATA_VARIABLE, POOL_SIZE, TOKEN_VARIABLE, WORKDIR_VARIABLE, DemoServer,
                                             check_port)
from diskexplorer.errors import DiskExplorerError

pytestmark = pytest.mark.slow





def _kernels(root_pid):
    try:
        procs = psutil.Process(root_pid).children(recursive=True)
    except psutil.Error:
        return []
    return [p for p in procs if "ipykernel" in _cmdline(p)]


def _cmdline(proc):
    # A culled kernel is a zombie until voila reaps it (psutil then raises): not a kernel.
    try:
        return " ".join(proc.cmdline())
    except psutil.Error:
        return ""


def _wait(predicate, timeout, step=0.25):
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        if predicate():
            return True
        time.sleep(step)
    return predicate()


@pytest.mark.parametrize("port", [0, -1, 65536, 99999])
def test_ports_out_of_range_get_one_line(port, capsys):
    assert main(["demo", "--port", str(port)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "between 1 and 65535" in err and "Traceback" not in err


def test_a_busy_port_is_refused_not_replaced(capsys):
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        s.listen()
        port = s.getsockname()[1]
        assert main(["demo", "--port", str(port)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "in use" in err and str(port) in err


def test_missing_workdir_and_data_are_usage_errors(tmp_path, capsys):
    assert main(["demo", "--port", str(free_port()), "--workdir", str(tmp_path / "nope")]) == 2
    assert "no such folder" in capsys.readouterr().err
    assert main(["demo", "--port", str(free_port()), "--data", str(tmp_path / "none.fits")]) == 2
    assert "none.fits" in capsys.readouterr().err


def test_check_port_accepts_a_free_port():
    check_port(free_port())
    with pytest.raises(DiskExplorerError, match="between 1 and 65535"):
        check_port("8866")


def test_command_preheats_one_kernel_and_environment_reaches_it(tmp_path):
    server = DemoServer(port=free_port(), workdir=tmp_path, data=[str(tmp_path)])
    cmd = server.command()
    assert "--preheat_kernel=True" in cmd and f"--pool_size={POOL_SIZE}" in cmd
    assert not any("preheat" in a or "pool_size" in a for a in DemoServer(port=free_port(), pool_size=0).command())
    env = server.environment()
    # voila starts preheated kernels with its own environment: the folder and data travel there.
    assert env[WORKDIR_VARIABLE] == str(tmp_path) and env[DATA_VARIABLE] == str(tmp_path)
    assert env["JUPYTER_WIDGETS_ECHO"] == "0" and env["OPENBLAS_NUM_THREADS"]


def test_server_binds_loopback_only_and_culls_kernels_of_closed_pages(tmp_path):
    port = free_port()
    server = DemoServer(port=port, workdir=tmp_path, idle_timeout=3)
    assert "--Voila.ip=127.0.0.1" in server.command()
    server.start()
    try:
        pid = server.process.pid
        conns = [c for c in psutil.Process(pid).net_connections(kind="inet")
                 if c.status == psutil.CONN_LISTEN]
        assert conns and {c.laddr.ip for c in conns} == {"127.0.0.1"}
        # voila preheats one kernel (it runs the app) before any page asks for it.
        assert _wait(lambda: len(_kernels(pid)) == 1, timeout=60)
        preheated = _kernels(pid)
        # A page request takes that kernel; the client goes away at once.
        with urllib.request.urlopen(server.url, timeout=120) as response:
            body = response.read().decode("utf-8", "replace")
        assert response.status == 200 and "Traceback" not in body
        assert alive(preheated)
        # Culled once idle with no page attached (3 s here; the default is 30 s).
        assert _wait(lambda: not alive(preheated), timeout=30), "the abandoned kernel was not shut down"
        # The pool was refilled, and a kernel waiting in the pool is never culled.
        assert _wait(lambda: len(_kernels(pid)) == 1, timeout=60)
        waiting = _kernels(pid)
        time.sleep(3 + 5)
        assert alive(waiting) == waiting
        assert port_open(port)  # the server itself keeps serving
    finally:
        server.stop()
    assert not port_open(port)


@pytest.mark.parametrize("signum", [signal.SIGTERM, signal.SIGINT], ids=["SIGTERM", "Ctrl-C"])
def test_a_signal_stops_voila_and_every_kernel(tmp_path, signum):
    port = free_port()
    proc = subprocess.Popen([sys.executable, "-m", "diskexplorer.cli", "demo", "--port", str(port)],
                            cwd=str(tmp_path), stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True)
    try:
        url, printed = served_address(proc)
        assert url.startswith(f"http://127.0.0.1:{port}/?token=") and proc.poll() is None
        with urllib.request.urlopen(url, timeout=120) as response:
            assert response.status == 200
        family = psutil.Process(proc.pid).children(recursive=True)
        assert any("voila" in " ".join(p.cmdline()) for p in family)
        assert any("ipykernel" in " ".join(p.cmdline()) for p in family)
        # Voila refills its preheated pool after the page took the waiting kernel; a kernel
        # stopped while it still runs the notebook prints ipykernel's shutdown traceback
        # (harmless, but not what this test is about): let the refill finish first.
        _wait(lambda: sum("ipykernel" in " ".join(p.cmdline()) for p in alive(
            psutil.Process(proc.pid).children(recursive=True))) >= 2, timeout=30)
        time.sleep(6)
        family = psutil.Process(proc.pid).children(recursive=True)
        proc.send_signal(signum)
        proc.wait(timeout=10)
        assert _wait(lambda: not alive(family), timeout=10), [p.cmdline() for p in alive(family)]
        assert not port_open(port)
        assert proc.returncode == 0
        out = "".join(printed) + proc.stdout.read()
        assert url in out and str(tmp_path) in out and "Traceback" not in out
    finally:
        stop_tree(proc)


def _status(url):
    """HTTP status and Location of a GET, redirects not followed."""
    import http.client
    from urllib.parse import urlsplit

    parts = urlsplit(url)
    conn = http.client.HTTPConnection(parts.hostname, parts.port, timeout=60)
    try:
        conn.request("GET", parts.path + (f"?{parts.query}" if parts.query else ""))
        response = conn.getresponse()
        response.read()
        return response.status, response.getheader("Location") or ""
    finally:
        conn.close()


def test_the_token_is_random_and_never_on_the_command_line(tmp_path):
    server = DemoServer(port=free_port(), workdir=tmp_path)
    assert len(server.token) >= 32 and server.token != DemoServer(port=free_port()).token
    assert server.url == f"{server.base_url}?token={server.token}"
    # Every user of the host can read a process's command line (ps), not its environment.
    assert not any(server.token in arg for arg in server.command())
    assert "--Voila.auto_token=True" in server.command()
    assert server.environment()[TOKEN_VARIABLE] == server.token
    open_server = DemoServer(port=free_port(), workdir=tmp_path, token="")
    assert open_server.url == open_server.base_url and TOKEN_VARIABLE not in open_server.environment()
    assert not any("token" in arg for arg in open_server.command())


def test_a_page_without_the_token_is_refused(tmp_path):
    (tmp_path / "private.txt").write_text("not for other users\n")
    server = DemoServer(port=free_port(), workdir=tmp_path, pool_size=0)
    server.start()
    try:
        base = server.base_url.rstrip("/")
        for path in ("/", "/?token=wrong", "/voila/render/explorer.ipynb", "/api/kernels", "/api/contents",
                     "/voila/files/private.txt", "/files/private.txt"):
            status, location = _status(base + path)
            assert status in (302, 403, 404), (path, status)
            if status == 302:
                assert urllib.parse.urlsplit(location).path.endswith("/login"), (path, location)
        with urllib.request.urlopen(server.url, timeout=180) as response:
            body = response.read().decode("utf-8", "replace")
        assert response.status == 200 and "Traceback" not in body
    finally:
        server.stop()


@pytest.mark.browser
def test_a_served_page_draws_with_the_token_and_reads_only_its_folders(tmp_path):
    from _browser import open_app, require_browser

    require_browser()
    work = tmp_path / "work"
    work.mkdir()
    outside = tmp_path / "outside.txt"
    outside.write_text("SECRET-FIRST-LINE 0:0:private\n")
    server = DemoServer(port=free_port(), workdir=work)
    server.start()
    try:
        # The page's later requests (kernel websockets) pass by the cookie voila sets.
        with open_app(server.url) as page:
            page.locator(".lm-TabBar-tab", has_text="data").first.click()
            page.wait_for_selector(".dx-path input", state="visible", timeout=30_000)
            for typed in (str(outside), "../outside.txt"):
                page.fill(".dx-path input", typed)
                page.locator("button.dx-load-data").click()
                page.wait_for_function(
                    "(want) => (document.querySelector('.dx-message') || {}).textContent?.includes(want)",
                    arg=f"{typed}: outside the folders this demo may read", timeout=30_000)
                message = page.evaluate("() => document.querySelector('.dx-message').textContent")
                assert "SECRET" not in message and "private" not in message
    finally:
        server.stop()


@pytest.mark.browser
def test_address_is_printed_once_the_preheated_kernel_is_ready(tmp_path, capsys):
    """`diskexplorer demo` says "warming up…" and prints its address only once the pool's
    kernel has built the explorer; a page opened at that moment (and a second one shortly
    after) is served from a ready kernel. The times are printed, not asserted (goals live
    in benchmarks/bench_browser.py)."""
    from _browser import ARGS, CHROMIUM, PAGES, first_page_timeline, require_browser
    from playwright.sync_api import sync_playwright

    from diskexplorer.app.serving.server import READY_VARIABLE

    require_browser()
    server = DemoServer(port=free_port(), workdir=tmp_path)
    # serve_forever's own steps (the order is checked below): start, wait until ready, then
    # the address a user opens at once.
    server.start()
    try:
        t0 = time.monotonic()
        ready = server.wait_ready(timeout=120)
        waited = time.monotonic() - t0
        assert ready and server.ready_kernels() >= 1
        marks = os.listdir(psutil.Process(server.process.pid).environ()[READY_VARIABLE])
        # The mark is the preheated kernel's: one of voila's kernels wrote it.
        assert {int(m) for m in marks} <= {p.pid for p in _kernels(server.process.pid)}
        with sync_playwright() as p:
            browser = p.chromium.launch(executable_path=CHROMIUM, headless=True, args=ARGS)
            try:
                first = first_page_timeline(browser.new_page(viewport={"width": 1500, "height": 1100}), server.url,
                                            figures=PAGES["interferometry"][:1])
            finally:
                browser.close()
        with capsys.disabled():
            print(f"\ndemo ready after {waited:.1f} s; a page opened then: first V² curve after "
                  f"{first['first_curve']:.2f} s")
    finally:
        server.stop()
    assert not os.path.exists(server.ready_dir)


def test_serve_forever_warms_up_before_the_address(tmp_path, monkeypatch):
    server = DemoServer(port=free_port(), workdir=tmp_path)
    order = []
    monkeypatch.setattr(server, "start", lambda: order.append("start"))
    monkeypatch.setattr(server, "wait_ready", lambda timeout=None: order.append("ready") or True)
    monkeypatch.setattr(server, "wait", lambda: 0)
    monkeypatch.setattr(server, "stop", lambda: order.append("stop"))
    server.serve_forever(say=lambda m: order.append(m))
    assert order[:3] == ["start", "diskexplorer: warming up…", "ready"]
    assert "serving the explorer at" in order[3] and order[-1] == "stop"
