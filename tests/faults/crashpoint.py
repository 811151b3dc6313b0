"""A crash-point harness: run one command in-process and, at its K-th filesystem call, either fail that call
with an OSError ("fail") or stop the process there ("kill": the folder is captured just before the call and
put back afterwards, which is what a kill -9 leaves on disk; no clean-up of the dying process counts).
Method: SQLite's crash and I/O-error testing ('How SQLite Is Tested', sections 3.2-3.3) at every call."""
from __future__ import annotations

import builtins
import errno
import os
import shutil

CALLS = ("open", "write", "fsync", "replace", "rename", "link", "unlink", "mkdir", "rmdir")


class Killed(BaseException):
    """The simulated kill: a BaseException, so no ``except Exception`` in the program swallows it."""


def capture(folder: str) -> dict[str, tuple[bytes | None, int]]:
    state: dict[str, tuple[bytes | None, int]] = {}
    for base, dirs, files in os.walk(folder):
        for d in dirs:
            p = os.path.join(base, d)
            state[p] = (None, os.lstat(p).st_mode)
        for name in files:
            p = os.path.join(base, name)
            if os.path.islink(p):
                continue
            with _ORIG_OPEN(p, "rb") as fh:
                state[p] = (fh.read(), os.lstat(p).st_mode)
    return state


def put_back(folder: str, state: dict[str, tuple[bytes | None, int]]) -> None:
    shutil.rmtree(folder)
    os.mkdir(folder)
    for p in sorted(state):
        data, mode = state[p]
        if data is None:
            os.makedirs(p, exist_ok=True)
            os.chmod(p, mode & 0o777)
        else:
            with _ORIG_OPEN(p, "wb") as fh:
                fh.write(data)
            os.chmod(p, mode & 0o777)


_ORIG_OPEN = builtins.open


class Faults:
    """Patch the filesystem calls; ``at`` is the 1-based call to hit (0: count only)."""

    def __init__(self, folder: str, at: int = 0, mode: str = "fail", err: int = errno.EIO):
        self.folder, self.at, self.mode, self.err = folder, at, mode, err
        self.count = 0
        self.snapshot = None
        self._saved: dict[str, object] = {}

    def _wrap(self, name, fn):
        def hit(*a, **k):
            self.count += 1
            if self.count == self.at:
                if self.mode == "kill":
                    self.snapshot = capture(self.folder)
                    raise Killed(name)
                raise OSError(self.err, f"{os.strerror(self.err)} (injected into {name})")
            return fn(*a, **k)
        return hit

    def __enter__(self):
        for name in CALLS:
            self._saved[name] = getattr(os, name)
            setattr(os, name, self._wrap(name, getattr(os, name)))
        builtins.open = self._wrap("builtins.open", _ORIG_OPEN)
        return self

    def __exit__(self, *exc):
        for name, fn in self._saved.items():
            setattr(os, name, fn)
        builtins.open = _ORIG_OPEN
        if self.snapshot is not None:
            put_back(self.folder, self.snapshot)
        return False
