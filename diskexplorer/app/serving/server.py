"""Serve the explorer as a local web app with voila, and stop it completely.

``diskexplorer demo`` runs voila as a child process on 127.0.0.1 and supervises it: the
port is checked before anything starts, the address is printed once the preheated kernel
has built the explorer (the demo says "warming up…" until then), and on SIGTERM or Ctrl-C voila is asked to stop (it shuts its kernels down), after which
any process of the demo still alive (voila, its kernels) is killed. Kernels of browser pages
that were closed are culled by voila's kernel manager after ``idle_timeout`` seconds.
voila keeps one kernel *preheated*: it has run the app notebook before anyone asks for the
page (imports, the sample data, the first evaluation, the widgets), so a page opens without
waiting for them; the next one is started a few seconds after a page takes it.

The demo is private: it listens on 127.0.0.1 only, and every other user of the host can
reach 127.0.0.1 too, so voila asks for a random token (:func:`new_token`), handed to it in
its environment (``JUPYTER_TOKEN``: another user can read a process's command line, not its
environment), and the address printed carries it. A page opened without it is sent to
voila's login page; with it, voila sets a cookie for the page's later requests. The page's
explorer is confined to the working folder and the ``--data`` files and folders
(:mod:`diskexplorer.app.state.workdir`).

Everything here is plain subprocess and socket work; no widget library is imported.
"""
from __future__ import annotations

import os
import secrets
import shutil
import signal
import socket
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from ...errors import DiskExplorerError

__all__ = ["DemoServer", "check_port", "voila_options", "new_token", "APP_NOTEBOOK", "DEFAULT_IDLE_TIMEOUT_S",
           "WORKDIR_VARIABLE", "DATA_VARIABLE", "TOKEN_VARIABLE", "READY_VARIABLE", "mark_ready", "POOL_SIZE", "POOL_FILL_DELAY_S",
           "KERNEL_ENVIRONMENT"]

#: The app notebook voila serves (package data).
APP_NOTEBOOK = Path(__file__).resolve().parent / "explorer.ipynb"
#: Seconds after which the kernel of a closed page is shut down.
DEFAULT_IDLE_TIMEOUT_S = 30
#: Environment variables through which the app notebook's kernel learns the user's folder
#: and data (read by :func:`diskexplorer.app.explore_served`).
WORKDIR_VARIABLE = "DISKEXPLORER_WORKDIR"
DATA_VARIABLE = "DISKEXPLORER_DATA"
#: Environment variable from which jupyter_server (under voila) reads the token
#: (with ``--Voila.auto_token=True``).
TOKEN_VARIABLE = "JUPYTER_TOKEN"
#: Environment variable naming the folder where each kernel that has built the served
#: explorer leaves a mark (a file named by its process id; :func:`mark_ready`): the demo
#: prints its address once the preheated kernels have, so a page opened then draws at once.
READY_VARIABLE = "DISKEXPLORER_READY_DIR"
#: Seconds the demo waits for its preheated kernels before it prints the address anyway.
READY_TIMEOUT_S = 120.0
#: Preheated kernels voila keeps ready (each has run the app notebook; about 250 MB each).
POOL_SIZE = 1
#: Seconds after a page takes a preheated kernel before voila starts the next one: the
#: page's first curve is drawn by then (about 2 s), and the next kernel has built the app
#: (about 3 s on two cores) before a collaborator who follows 5 s later opens the page
#: (measured with benchmarks/bench_browser.py: that second page drew in 1.8 s, against
#: 3.7 s with 5 s of delay).
POOL_FILL_DELAY_S = 2.0


#: Settings of the app's kernels (defaults in voila's environment, which its kernels inherit):
#: one BLAS thread per kernel, since the live loop's products are small and several kernels
#: may share the machine; no echo of every value the page sends (ipywidgets 8 echoes each
#: slider step back to the page, for several pages sharing one kernel, which a served page
#: never does): one message fewer per step.
KERNEL_ENVIRONMENT = {"OPENBLAS_NUM_THREADS": "1", "JUPYTER_WIDGETS_ECHO": "0"}


#: JupyterLab extensions a served page does not load (see :func:`voila_options`).
FOREIGN_EXTENSIONS = ("@jupyter-notebook/lab-extension",)


def voila_options(pool_size=POOL_SIZE, fill_delay=POOL_FILL_DELAY_S):
    """voila command-line options of the served app that do not depend on the port.

    Parameters
    ----------
    pool_size : int
        Preheated kernels (0: none; every page then starts its own kernel on request).
    fill_delay : float
        Seconds between a page taking a preheated kernel and the start of the next one.

    Notes
    -----
    A preheated kernel is started by voila with voila's own environment, so it reads the
    folder and data handed over in :data:`WORKDIR_VARIABLE` and :data:`DATA_VARIABLE` like
    a kernel started for a request. voila never culls a kernel waiting in the pool.
    """
    # Notebook 7's JupyterLab extension, installed beside voila, fails to load in a voila
    # page (it needs a newer JupyterLab core than voila's) and logs errors: the app needs none
    # of it.
    skip = [f"--VoilaConfiguration.extension_denylist={name}" for name in FOREIGN_EXTENSIONS]
    if pool_size <= 0:
        return skip
    return skip + ["--preheat_kernel=True", f"--pool_size={int(pool_size)}",
                   f"--VoilaKernelManager.fill_delay={float(fill_delay):g}"]


def mark_ready(environ=None):
    """In a served kernel: note that this kernel has built the explorer (see :data:`READY_VARIABLE`)."""
    folder = (os.environ if environ is None else environ).get(READY_VARIABLE)
    if folder and os.path.isdir(folder):
        Path(folder, str(os.getpid())).touch()


def new_token():
    """A random token for the served demo: 32 bytes from :mod:`secrets`, URL-safe text."""
    return secrets.token_urlsafe(32)


def check_port(port, host="127.0.0.1"):
    """Refuse a port that is out of range or already taken on ``host``.

    Parameters
    ----------
    port : int
        TCP port, 1–65535.

    Raises
    ------
    DiskExplorerError
        With a one-line reason (out of range, in use, not permitted).
    """
    if not isinstance(port, int) or isinstance(port, bool) or not 1 <= port <= 65535:
        raise DiskExplorerError(f"--port {port}: expected a TCP port between 1 and 65535")
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        try:
            s.bind((host, port))
        except PermissionError:
            raise DiskExplorerError(f"--port {port}: not permitted on {host} (ports below 1024 need "
                                    "administrator rights); choose another with --port") from None
        except OSError as exc:
            raise DiskExplorerError(f"--port {port}: {host}:{port} is in use ({exc.strerror}); "
                                    "choose another with --port") from None


def _descendants(pid):
    """The live descendant processes of ``pid`` (psutil objects); empty if it is gone."""
    import psutil

    try:
        return psutil.Process(pid).children(recursive=True)
    except psutil.Error:
        return []


class DemoServer:
    """voila serving the app notebook on 127.0.0.1, as a supervised child process.

    Parameters
    ----------
    port : int
        TCP port (checked with :func:`check_port`).
    workdir : str or os.PathLike, optional
        Folder where the app resolves relative file names (default: the current folder).
    data : sequence of str, optional
        Data files or folders the app opens instead of the sample (made absolute).
    idle_timeout : int
        Seconds of inactivity after which the kernel of a closed page is shut down.
    log_level : str
        voila's log level (``WARN`` keeps the terminal quiet).
    pool_size : int
        Preheated kernels kept ready (:func:`voila_options`; 0 switches preheating off).
    token : str or None
        The token a page must bring (``?token=...`` once; voila then sets a cookie).
        Default None: a new random one (:func:`new_token`). ``""`` serves without a
        token: every local user of the host can then open the page.

    Notes
    -----
    voila starts each page's kernel in a new session (process group), so a terminal's
    Ctrl-C reaches only this process; :meth:`stop` shuts everything down in order.
    """

    def __init__(self, port=8866, workdir=None, data=None, idle_timeout=DEFAULT_IDLE_TIMEOUT_S,
                 log_level="WARN", pool_size=POOL_SIZE, token=None):
        check_port(port)
        if not APP_NOTEBOOK.exists():
            raise DiskExplorerError(f"the app notebook {APP_NOTEBOOK} is missing from the installation")
        if not (isinstance(idle_timeout, int) and idle_timeout >= 1):
            raise DiskExplorerError(f"idle timeout {idle_timeout!r} s: expected a whole number of seconds ≥ 1")
        self.port = port
        self.workdir = Path(workdir if workdir is not None else os.getcwd()).expanduser().resolve()
        if not self.workdir.is_dir():
            raise DiskExplorerError(f"--workdir {self.workdir}: no such folder")
        self.data = [str(Path(p).expanduser().resolve()) for p in (data or [])]
        missing = [p for p in self.data if not os.path.exists(p)]
        if missing:
            raise DiskExplorerError(f"--data {missing[0]}: no such file or folder")
        self.idle_timeout = idle_timeout
        self.log_level = log_level
        self.pool_size = pool_size
        self.token = new_token() if token is None else str(token)
        self.process = None
        self.ready_dir = None

    @property
    def base_url(self):
        """The page's address without the token."""
        return f"http://127.0.0.1:{self.port}/"

    @property
    def url(self):
        """The page's address, with the token when there is one."""
        return self.base_url + (f"?token={self.token}" if self.token else "")

    def command(self):
        """The voila command line (a list)."""
        # Culling: an idle kernel with no open page is shut down after idle_timeout s,
        # checked every few seconds; kernels with a page attached are never culled.
        interval = max(1, min(10, self.idle_timeout // 3))
        return [sys.executable, "-m", "voila", str(APP_NOTEBOOK), "--no-browser",
                f"--port={self.port}", "--Voila.ip=127.0.0.1", "--Voila.port_retries=0",
                f"--Voila.log_level={self.log_level}",
                f"--MappingKernelManager.cull_idle_timeout={self.idle_timeout}",
                f"--MappingKernelManager.cull_interval={interval}",
                "--MappingKernelManager.cull_connected=False"] + self._token_options() + voila_options(self.pool_size)

    def _token_options(self):
        # The token travels in the environment (TOKEN_VARIABLE), never on the command
        # line, which every user of the host can read (ps); auto_token makes
        # jupyter_server read it there. Without it voila serves with no authentication.
        return ["--Voila.auto_token=True"] if self.token else []

    def environment(self):
        """The environment of voila and its kernels."""
        env = dict(os.environ)
        env[WORKDIR_VARIABLE] = str(self.workdir)
        if self.data:
            env[DATA_VARIABLE] = os.pathsep.join(self.data)
        else:
            env.pop(DATA_VARIABLE, None)
        for key, value in KERNEL_ENVIRONMENT.items():
            env.setdefault(key, value)
        if self.token:
            env[TOKEN_VARIABLE] = self.token
        else:
            env.pop(TOKEN_VARIABLE, None)
        if self.ready_dir:
            env[READY_VARIABLE] = self.ready_dir
        else:
            env.pop(READY_VARIABLE, None)
        return env

    def start(self, timeout=60.0):
        """Start voila and wait until it accepts connections on the port.

        Raises
        ------
        DiskExplorerError
            If voila exits or does not answer within ``timeout`` seconds (it is stopped).
        """
        self.ready_dir = tempfile.mkdtemp(prefix="diskexplorer-ready-")
        self.process = subprocess.Popen(self.command(), env=self.environment(), cwd=str(self.workdir),
                                        start_new_session=True)
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            code = self.process.poll()
            if code is not None:
                raise DiskExplorerError(f"voila stopped at start with exit status {code}")
            try:
                with socket.create_connection(("127.0.0.1", self.port), timeout=0.5):
                    return self
            except OSError:
                time.sleep(0.2)
        self.stop()
        raise DiskExplorerError(f"voila did not answer on port {self.port} within {timeout:g} s")

    def ready_kernels(self):
        """How many kernels have built the served explorer so far (preheated ones first)."""
        try:
            return len(os.listdir(self.ready_dir)) if self.ready_dir else 0
        except OSError:
            return 0

    def wait_ready(self, timeout=READY_TIMEOUT_S):
        """Wait until the preheated kernels have run the app notebook (voila's pool is full).

        A page opened before that waits for the kernel to finish (seconds on a busy
        machine); one opened after draws its first curve at once. Without preheating there
        is nothing to wait for.

        Returns
        -------
        bool
            Whether they were ready within ``timeout`` seconds (False: voila stopped, or a
            kernel was slow; the page then still works, only slower).
        """
        want = max(0, int(self.pool_size))
        deadline = time.monotonic() + timeout
        while self.ready_kernels() < want:
            if self.process.poll() is not None or time.monotonic() > deadline:
                return False
            time.sleep(0.1)
        return True

    def wait(self):
        """Block until voila exits; return its exit status."""
        return self.process.wait()

    def stop(self, grace=8.0):
        """Stop voila and every process it started; return voila's exit status.

        SIGTERM first (voila then shuts its kernels down), up to ``grace`` seconds, then
        SIGKILL for voila and for any kernel still alive.
        """
        import psutil

        if self.process is None:
            return None
        children = _descendants(self.process.pid)
        if self.process.poll() is None:
            try:
                self.process.send_signal(signal.SIGTERM)
            except ProcessLookupError:
                pass
        try:
            code = self.process.wait(timeout=grace)
        except subprocess.TimeoutExpired:
            self.process.kill()
            code = self.process.wait()
        # Kernels voila did not manage to shut down (it was killed, or a kernel hung).
        alive = [p for p in children if p.is_running()]
        for proc in alive:
            try:
                proc.terminate()
            except psutil.Error:
                pass
        _, still = psutil.wait_procs(alive, timeout=3.0)
        for proc in still:
            try:
                proc.kill()
            except psutil.Error:
                pass
        psutil.wait_procs(still, timeout=3.0)
        if self.ready_dir:
            shutil.rmtree(self.ready_dir, ignore_errors=True)
        return code

    def serve_forever(self, say=print):
        """Start, print the address, and stop everything on SIGTERM, SIGINT or voila's exit.

        Returns
        -------
        int
            0 after a signal, else voila's exit status.
        """
        stopping = {"signal": None}

        def on_signal(signum, frame):
            stopping["signal"] = signum
            raise KeyboardInterrupt

        previous = {s: signal.signal(s, on_signal) for s in (signal.SIGTERM, signal.SIGINT)}
        try:
            self.start()
            if self.pool_size > 0:
                # The address only once a page opened now is served by a kernel that has
                # built the explorer: before, the page would wait for it.
                say("diskexplorer: warming up…")
                if not self.wait_ready() and self.process.poll() is not None:
                    return self.wait()
            say(f"diskexplorer: ready: serving the explorer at {self.url}  (Ctrl-C to stop)")
            if not self.token:
                say("diskexplorer: without a token: every user of this host can open the page and read and "
                    "write files in its folders as you")
            say(f"diskexplorer: files you save from the app go to {self.workdir}")
            code = self.wait()
        except KeyboardInterrupt:
            code = 0
        finally:
            # Signals during the shutdown itself must not interrupt it.
            for s in previous:
                signal.signal(s, signal.SIG_IGN)
            try:
                self.stop()
            finally:
                for s, handler in previous.items():
                    signal.signal(s, handler)
        if stopping["signal"] is not None:
            say("diskexplorer: stopped")
        return code
