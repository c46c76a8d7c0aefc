"""Helpers for tests that start the demo server as real processes."""
import re
import select
import signal
import socket
import subprocess
import time

import psutil

__all__ = ["free_port", "port_open", "stop_tree", "alive", "served_address"]


def free_port():
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def port_open(port):
    with socket.socket() as s:
        return s.connect_ex(("127.0.0.1", port)) == 0


def alive(procs):
    """The processes of ``procs`` that still run (zombies count as gone)."""
    out = []
    for p in procs:
        try:
            if p.is_running() and p.status() != psutil.STATUS_ZOMBIE:
                out.append(p)
        except psutil.Error:
            pass
    return out


def stop_tree(proc):
    """After a failure: stop the demo and everything it started, so no server outlives the test."""
    if proc.poll() is not None:
        return
    family = psutil.Process(proc.pid).children(recursive=True)
    proc.send_signal(signal.SIGTERM)
    try:
        proc.wait(timeout=15)
    except subprocess.TimeoutExpired:
        proc.kill()
    for child in alive(family):
        try:
            child.kill()
        except psutil.Error:
            pass


def served_address(proc, timeout=90.0):
    """The address ``diskexplorer demo`` prints once it serves (with its token), read from
    its stdout (a text pipe); ``(url, lines read)``. Fails if none comes within ``timeout`` s."""
    end = time.monotonic() + timeout
    seen = []
    while time.monotonic() < end:
        ready, _, _ = select.select([proc.stdout], [], [], 0.5)
        if ready:
            line = proc.stdout.readline()
            if not line:
                break
            seen.append(line)
            found = re.search(r"serving the explorer at (\S+)", line)
            if found:
                return found.group(1), seen
        elif proc.poll() is not None:
            break
    raise AssertionError("diskexplorer demo printed no address:\n" + "".join(seen))
