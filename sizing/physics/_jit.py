"""Compilation switch for the compiled physics kernels (numba).

`njit` compiles a function with ``numba.njit(cache=True)``: machine code is
written to an on-disk cache on the first call and reused by later processes,
so the compile time is paid once per machine and per version of the source.
numba checks only the timestamp of a function's own file, so a kernel that
inlines functions from other files could be served stale code after an edit;
the cache therefore lives in a folder named after a hash of every compiled
source file (``$SIZING_CACHE_DIR``, else ``$XDG_CACHE_HOME/stagesizer`` or
``~/.cache/stagesizer``, then ``numba-<hash>``).

Setting the environment variable ``SIZING_NO_JIT=1`` before import runs the
same functions as plain Python (slow; for debugging and for reading
tracebacks). Only the flight layer and the atmosphere import this module: an
ideal delta-v problem never loads numba.
"""

from __future__ import annotations

import hashlib
import os
from pathlib import Path

__all__ = ["njit", "JIT_ENABLED", "cache_dir", "cache_is_warm"]

JIT_ENABLED = os.environ.get("SIZING_NO_JIT", "") not in ("1", "true", "yes")


def cache_dir() -> Path:
    """Folder of the compiled-code cache for the current sources."""
    here = Path(__file__).resolve().parent
    digest = hashlib.sha1()
    for path in sorted([here / "_jit.py", here / "atmosphere.py", *here.glob("flight/*.py")]):
        digest.update(path.name.encode())
        digest.update(path.read_bytes())
    base = os.environ.get("SIZING_CACHE_DIR")
    if not base:
        xdg = os.environ.get("XDG_CACHE_HOME")
        base = str(Path(xdg) / "stagesizer") if xdg else str(Path.home() / ".cache" / "stagesizer")
    return Path(base) / f"numba-{digest.hexdigest()[:16]}"


def cache_is_warm(path: Path | None = None) -> bool:
    """True when the flight kernel's compiled code for this checkout is in the cache (no compile on the
    first flight). numba files a source's cache under ``<folder name>_<sha1 of its folder path>``
    (numba.core.caching, `_CacheLocator.get_suitable_cache_subpath`), so another checkout of the same
    sources at another path has its own entry and compiles anew."""
    d = cache_dir() if path is None else path
    flight = Path(__file__).resolve().parent / "flight"
    sub = d / f"{flight.name}_{hashlib.sha1(str(flight).encode()).hexdigest()}"
    return sub.is_dir() and any(sub.glob("kernel.run_flight*.nbi"))


def _announce_compile(path: Path) -> None:
    """One stderr line before a first-time compile, in the main process only (workers stay quiet)."""
    import multiprocessing
    import sys

    if multiprocessing.current_process().name == "MainProcess" and not cache_is_warm(path):
        print(f"note: compiling the flight kernel for this machine (once; about 30-90 s), cached in {path}",
              file=sys.stderr, flush=True)


if JIT_ENABLED:
    import numba as _numba

    try:
        _dir = cache_dir()
        _dir.mkdir(parents=True, exist_ok=True)
        _numba.config.CACHE_DIR = str(_dir)
        _announce_compile(_dir)
    except OSError:  # pragma: no cover - unwritable home: numba picks its own place
        pass

    def njit(func=None, *, inline: bool = False):
        """Compile `func` in nopython mode with an on-disk cache (``inline``: inline it in its callers)."""
        opts = {"cache": True, "nogil": True, "error_model": "numpy"}
        if inline:
            opts["inline"] = "always"
        if func is None:
            return lambda f: _numba.njit(**opts)(f)
        return _numba.njit(**opts)(func)
else:  # pragma: no cover - exercised by hand with SIZING_NO_JIT=1

    def njit(func=None, *, inline: bool = False):
        """No compilation: return `func` unchanged."""
        def wrap(f):
            f.py_func = f
            return f
        return wrap if func is None else wrap(func)
