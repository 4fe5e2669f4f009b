"""Start the workbench: Streamlit headless on a local address, no usage statistics.

Called by ``obligor-memo app``. Imports nothing heavy; Streamlit runs in a child process so the
command's exit code is the server's.
"""

from __future__ import annotations

import ipaddress
import os
import subprocess
import sys
from pathlib import Path

from obligor_memo.app.workbench.state import WORKDIR_ENV, default_workdir

WORKBENCH = Path(__file__).resolve().parent / "main.py"
MAX_UPLOAD_MB = 2                  # Streamlit's unit is the megabyte


def is_loopback(host: str) -> bool:
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


def streamlit_command(*, port: int, host: str) -> list[str]:
    """The child command line; every setting is explicit so no user config can loosen it."""
    return [sys.executable, "-m", "streamlit", "run", str(WORKBENCH),
            "--server.headless", "true", "--server.address", host, "--server.port", str(port),
            "--browser.gatherUsageStats", "false", "--server.fileWatcherType", "none",
            "--server.runOnSave", "false", "--client.showErrorDetails", "none",
            # The upload widget states this limit; the engine refuses statement files over
            # engine.statements.MAX_FILE_BYTES (2,000,000 bytes) in any case.
            "--server.maxUploadSize", str(MAX_UPLOAD_MB),
            "--client.toolbarMode", "minimal", "--global.developmentMode", "false",
            "--theme.base", "light", "--theme.primaryColor", "#b3612a"]


def serve(port: int = 8501, host: str = "127.0.0.1", workdir: Path | None = None) -> int:
    """Run the workbench until interrupted; returns the exit code."""
    folder = Path(workdir).expanduser() if workdir else default_workdir()
    try:
        (folder / "cases").mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        print(f"obligor-memo: cannot use the working folder {folder} ({exc.strerror}); "
              "choose another with --workdir.", file=sys.stderr)
        return 2
    if not is_loopback(host):
        print(f"WARNING: binding to {host} exposes the workbench and its saved cases to the network. "
              "Use 127.0.0.1 unless you know the network is trusted.", file=sys.stderr)
    env = dict(os.environ, **{WORKDIR_ENV: str(folder)})
    env["STREAMLIT_BROWSER_GATHER_USAGE_STATS"] = "false"
    root = str(WORKBENCH.parent)
    shown = "127.0.0.1" if host in ("0.0.0.0", "::") else host
    print(f"obligor-memo workbench on http://{shown}:{port} (opens on the sample borrower); "
          f"cases autosaved under {folder / 'cases'}. Stop with Ctrl+C.", flush=True)
    try:
        return subprocess.call(streamlit_command(port=port, host=host), env=env, cwd=root)
    except KeyboardInterrupt:
        return 0
