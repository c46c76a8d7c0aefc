"""Helpers for tests that start the demo server as real processes."""
import signal
import socket
import subprocess

import psutil

__all__ = ["free_port", "port_open", "stop_tree", "alive"]


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
