"""WeasyPrint, imported once with a quick library lookup.

Importing WeasyPrint opens Pango, HarfBuzz, GObject and Fontconfig by trying several names per
library (Windows, macOS and Linux spellings). On Linux each name that is not a file path goes to
``ctypes.util.find_library``, which for a name that does not exist runs the linker cache, then
the C compiler and the linker, about 20 ms of subprocesses each: some 14 of them, about 0.3 s of
every cold memo. During that import the lookup is answered from one reading of the linker cache
(``ldconfig -p``), which is what ``find_library`` consults first anyway; names the cache does not
hold are reported as not found at once instead of being searched for by the compiler. Names that
are paths are opened by the dynamic loader as before (``LD_LIBRARY_PATH`` applies), so a library
outside the cache is still found by its full ``.so`` name.
"""

from __future__ import annotations

import functools
import os
import re
import shutil
import subprocess
import sys
import threading
from collections.abc import Callable, Iterator
from contextlib import contextmanager, nullcontext
from types import ModuleType

# How the linker cache labels a library of this interpreter's architecture (as ctypes.util does).
_CACHE_ABI = {
    "x86_64": "libc6,x86-64",
    "aarch64": "libc6,AArch64",
    "ppc64le": "libc6,64bit",
    "s390x": "libc6,64bit",
    "riscv64": "libc6,64bit",
}
_LOCK = threading.Lock()


def linker_cache() -> dict[str, str]:
    """Sonames in the linker cache of this machine's architecture, by the name before ``.so``.

    Returns
    -------
    dict[str, str]
        For instance ``{"libpango-1.0": "libpango-1.0.so.0", ...}``; the first entry of a name
        wins, as in ``ctypes.util``. Empty when the cache cannot be read (not Linux, no
        ``ldconfig``, an unknown architecture).
    """
    abi = _CACHE_ABI.get(os.uname().machine) if sys.platform.startswith("linux") else None
    ldconfig = shutil.which("ldconfig") or next(
        (p for p in ("/sbin/ldconfig", "/usr/sbin/ldconfig") if os.access(p, os.X_OK)), None
    )
    if abi is None or ldconfig is None or sys.maxsize <= 2**32:
        return {}
    try:
        listing = subprocess.run(
            [ldconfig, "-p"], capture_output=True, text=True, timeout=5, env={**os.environ, "LC_ALL": "C"}
        ).stdout
    except (OSError, subprocess.SubprocessError):
        return {}
    found: dict[str, str] = {}
    for match in re.finditer(r"^\s+(lib\S+?)\.so(\S*)\s+\(([^)]*)\)", listing, re.MULTILINE):
        stem, version, flags = match.groups()
        if flags.startswith(abi):
            found.setdefault(stem, f"{stem}.so{version}")
    return found


@contextmanager
def _quick_find_library(cache: dict[str, str]) -> Iterator[None]:
    import ctypes.util

    original: Callable[[str], str | None] = ctypes.util.find_library

    def find(name: str) -> str | None:  # ctypes.util's rule: the library of ``name`` is lib<name>.so*
        return cache.get(f"lib{name}")

    setattr(ctypes.util, "find_library", find)  # noqa: B010 (a module attribute, set for a moment)
    try:
        yield
    finally:
        setattr(ctypes.util, "find_library", original)  # noqa: B010


@functools.cache
def weasyprint() -> ModuleType:
    """The ``weasyprint`` module, imported on first call with the quick library lookup.

    Returns
    -------
    ModuleType
        The imported module (later calls return it at once).
    """
    with _LOCK:
        cache = {} if "weasyprint" in sys.modules else linker_cache()
        with _quick_find_library(cache) if cache else nullcontext():  # else the library's own lookup
            import weasyprint as module
    return module
