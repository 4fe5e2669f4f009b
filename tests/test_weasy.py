"""WeasyPrint's import with the quick library lookup (app/memo/weasy.py).

Reference: the standard library's ``ctypes.util.find_library``, whose first source on Linux is the
same linker cache; the quick lookup must name the same library for every name the cache holds.
"""

from __future__ import annotations

import ctypes.util
import subprocess
import sys

import pytest
from obligor_memo.app.memo import weasy

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"), reason="the linker cache is Linux's")

# The libraries WeasyPrint opens, by the names its Linux spelling reaches.
LIBRARIES = ("gobject-2.0", "pango-1.0", "harfbuzz", "fontconfig", "pangoft2-1.0", "c", "m")


@pytest.fixture(scope="module")
def cache():
    found = weasy.linker_cache()
    if not found:
        pytest.skip("no readable linker cache here")
    return found


@pytest.mark.parametrize("name", LIBRARIES)
def test_the_quick_lookup_names_the_library_the_standard_lookup_names(cache, name):
    expected = ctypes.util.find_library(name)
    with weasy._quick_find_library(cache):
        assert ctypes.util.find_library(name) == expected
    assert expected is not None


def test_a_name_the_cache_lacks_is_not_found_without_running_a_compiler(cache, monkeypatch):
    def no_subprocess(*args, **kwargs):
        raise AssertionError(f"a subprocess was started: {args}")

    with weasy._quick_find_library(cache):
        monkeypatch.setattr(subprocess, "Popen", no_subprocess)
        # The spellings WeasyPrint tries first on Linux, which are other platforms' names.
        for name in ("libgobject-2.0-0", "gobject-2.0-0", "libpango-1.0-0", "no-such-library-here"):
            assert ctypes.util.find_library(name) is None


def test_the_standard_lookup_is_back_afterwards(cache):
    original = ctypes.util.find_library
    with weasy._quick_find_library(cache):
        assert ctypes.util.find_library is not original
    assert ctypes.util.find_library is original
    with pytest.raises(RuntimeError), weasy._quick_find_library(cache):
        raise RuntimeError("a failed import")
    assert ctypes.util.find_library is original


def test_weasyprint_is_imported_with_every_library_open():
    module = weasy.weasyprint()
    from weasyprint.text import ffi

    assert module is sys.modules["weasyprint"]
    assert weasy.weasyprint() is module
    for library in (ffi.gobject, ffi.pango, ffi.harfbuzz, ffi.fontconfig, ffi.pangoft2):
        assert library is not None
    assert ctypes.util.find_library.__module__ == "ctypes.util"
