"""Start the workbench: Streamlit headless on a local address, no usage statistics.

Called by ``obligor-memo app``. Imports nothing heavy; Streamlit runs in a child process so the
command's exit code is the server's.
"""

from __future__ import annotations

import ipaddress
import os
import signal
import subprocess
import sys
from pathlib import Path
from typing import Any

from obligor_memo.app.workbench.state import WORKDIR_ENV, default_workdir

WORKBENCH = Path(__file__).resolve().parent / "main.py"
MAX_UPLOAD_MB = 2  # Streamlit's unit is the megabyte


def is_loopback(host: str) -> bool:
    """Whether ``host`` stays on this machine: "localhost" or a loopback IP address.

    Parameters
    ----------
    host : str
        A host name or an IP address.

    Returns
    -------
    bool
        True for "localhost" and any loopback address (127.0.0.0/8, ::1); False for anything
        else, other host names included.
    """
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


def streamlit_command(*, port: int, host: str) -> list[str]:
    """The child command line; every setting is explicit so no user config can loosen it.

    Parameters
    ----------
    port : int
        The port the server listens on.
    host : str
        The address the server binds to.

    Returns
    -------
    list[str]
        This Python running ``streamlit run`` on the workbench's main.py, headless, without
        usage statistics, file watching or error details, with uploads capped at
        ``MAX_UPLOAD_MB`` [MB].
    """
    return [
        sys.executable,
        "-m",
        "streamlit",
        "run",
        str(WORKBENCH),
        "--server.headless",
        "true",
        "--server.address",
        host,
        "--server.port",
        str(port),
        "--browser.gatherUsageStats",
        "false",
        "--server.fileWatcherType",
        "none",
        "--server.runOnSave",
        "false",
        "--client.showErrorDetails",
        "none",
        # The upload widget states this limit; the engine refuses statement files over
        # engine.statements.MAX_FILE_BYTES (2,000,000 bytes) in any case.
        "--server.maxUploadSize",
        str(MAX_UPLOAD_MB),
        # A full garbage collection after every rerun costs about 130 ms of CPU with the engine,
        # pandas and plotly loaded (most of a rerun); Python's own generational collector still
        # runs, and every cache here is bounded.
        "--runner.postScriptGC",
        "false",
        "--client.toolbarMode",
        "minimal",
        "--global.developmentMode",
        "false",
        "--theme.base",
        "light",
        "--theme.primaryColor",
        "#b3612a",
    ]


def serve(port: int = 8501, host: str = "127.0.0.1", workdir: Path | None = None) -> int:
    """Run the workbench until interrupted; returns the exit code.

    The working folder's ``cases`` folder is created first; binding to an address other than a
    loopback one prints a warning.

    Parameters
    ----------
    port : int, optional
        The port the server listens on.
    host : str, optional
        The address the server binds to.
    workdir : Path | None, optional
        The working folder for autosaved cases; None: :func:`.state.default_workdir`.

    Returns
    -------
    int
        2 when the working folder cannot be used, else the server's exit code (0 when it was
        stopped by Ctrl+C, SIGINT or SIGTERM).
    """
    folder = Path(workdir).expanduser() if workdir else default_workdir()
    try:
        (folder / "cases").mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        print(
            f"obligor-memo: cannot use the working folder {folder} ({exc.strerror}); choose another with --workdir.",
            file=sys.stderr,
        )
        return 2
    if not is_loopback(host):
        print(
            f"WARNING: binding to {host} exposes the workbench and its saved cases to the network. "
            "Use 127.0.0.1 unless you know the network is trusted.",
            file=sys.stderr,
        )
    env = dict(os.environ, **{WORKDIR_ENV: str(folder)})
    env["STREAMLIT_BROWSER_GATHER_USAGE_STATS"] = "false"
    root = str(WORKBENCH.parent)
    shown = "127.0.0.1" if host in ("0.0.0.0", "::") else host
    print(
        f"obligor-memo workbench on http://{shown}:{port} (opens on the sample borrower); "
        f"cases autosaved under {folder / 'cases'}. Stop with Ctrl+C.",
        flush=True,
    )
    child = subprocess.Popen(streamlit_command(port=port, host=host), env=env, cwd=root)
    return _wait_forwarding_signals(child)


def _wait_forwarding_signals(child: subprocess.Popen[bytes], grace: float = 15.0) -> int:
    """Wait for the server; SIGTERM or SIGHUP to this process is passed on to it.

    Streamlit then shuts down as on Ctrl+C (its exit handlers close the chart browser) and
    nothing is left: a server still running when this process leaves is terminated, and killed
    after ``grace``.

    Parameters
    ----------
    child : subprocess.Popen[bytes]
        The server process.
    grace : float, optional
        How long the server may take to stop before it is killed [s].

    Returns
    -------
    int
        0 when the server ended by SIGTERM or SIGINT (or Ctrl+C here), else its exit code.
    """

    def forward(signum: int, frame: Any) -> None:
        if child.poll() is None:
            child.send_signal(signal.SIGTERM)

    previous = {sig: signal.signal(sig, forward) for sig in (signal.SIGTERM, signal.SIGHUP)}
    try:
        while True:
            try:
                code = child.wait()
                return 0 if code in (-signal.SIGTERM, -signal.SIGINT, 130, 143) else code
            except KeyboardInterrupt:  # Ctrl+C reaches the child too (same process group)
                try:
                    child.wait(timeout=grace)
                except subprocess.TimeoutExpired:
                    child.kill()
                return 0
    finally:
        if child.poll() is None:  # this process is leaving: so is the server
            child.terminate()
            try:
                child.wait(timeout=grace)
            except subprocess.TimeoutExpired:
                child.kill()
        for sig, handler in previous.items():
            signal.signal(sig, handler)
