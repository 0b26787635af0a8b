"""Atomic publication of a rebuild into an output root.

Layout of ``--out DIR``::

    DIR/
      vintages/<vintage>/       one complete rebuild: <table>.parquet, valvol.duckdb, manifest.json
      latest -> vintages/<v>    symbolic link, replaced atomically (rename) after a rebuild succeeds
      <table>.parquet           links through ``latest`` (levels, deflators, growth, checks, ...)
      manifest.json, valvol.duckdb   links through ``latest``
      .staging/<id>/            work of a running rebuild; never visible as a vintage
      .lock, .lock.pid          the file lock held by the rebuild writing to DIR, and its holder

A rebuild works only inside ``.staging/``; the finished folder is renamed into
``vintages/`` and only then does ``latest`` move, with one ``rename(2)``.
A failed or killed rebuild leaves the previous vintage and ``latest`` intact;
its staging folder is removed by the next rebuild.
"""

from __future__ import annotations

import hashlib
import os
import shutil
import uuid
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from filelock import FileLock, Timeout

from valvol.errors import ConfigError, OutputBusyError, PublishError

STAGING = ".staging"
VINTAGES = "vintages"
LATEST = "latest"


def sha256_file(path: Path) -> str:
    """Hex SHA-256 of a file's bytes."""
    h = hashlib.sha256()
    with path.open("rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def check_output_folder(accounts_dir: str | Path, out_dir: str | Path) -> None:
    """Refuse an output root a rebuild must not write to, before anything is written (ConfigError).

    The output folder must differ from the accounts folder and lie neither inside it nor
    around it: tables published at the top of the accounts folder would be read as accounts
    by the next rebuild, and a rebuild must never write where its inputs are. It must be a
    folder (or not exist yet) under a folder that can be created.
    """
    accounts, out = Path(accounts_dir), Path(out_dir)
    if "\0" in str(out):
        raise ConfigError(f"--out: output folder {str(out)!r} holds a NUL character")
    try:
        a, o = accounts.resolve(), out.resolve()
    except (OSError, RuntimeError) as exc:  # a symbolic-link loop, a name too long
        reason = getattr(exc, "strerror", None) or exc
        raise ConfigError(f"--out: output folder {out} cannot be used: {reason}") from None
    both = f"(output folder {out}, accounts folder {accounts})"
    if o == a:
        raise ConfigError(f"--out: the output folder is the accounts folder {both}; choose a folder outside it")
    if o.is_relative_to(a):
        raise ConfigError(f"--out: the output folder lies inside the accounts folder {both}; choose a folder "
                          "outside it")
    if a.is_relative_to(o):
        raise ConfigError(f"--out: the output folder contains the accounts folder {both}; choose a folder "
                          "beside it")
    try:
        if o.exists() and not o.is_dir():
            raise ConfigError(f"--out: output folder {out} exists and is not a folder")
        for parent in o.parents:  # the nearest existing ancestor must be a folder
            if parent.exists():
                if not parent.is_dir():
                    raise ConfigError(f"--out: output folder {out} cannot be created: {parent} is not a folder")
                break
    except OSError as exc:  # a name too long, no permission to look
        raise ConfigError(f"--out: output folder {out} cannot be used: {exc.strerror or exc}") from None


@contextmanager
def output_lock(out_dir: Path) -> Iterator[None]:
    """Hold the output root's lock for one rebuild; fail at once if another rebuild holds it.

    The lock is an operating-system file lock on ``DIR/.lock`` taken through ``filelock``
    (``flock`` on POSIX systems, ``msvcrt`` locking on Windows), so it is released by the
    system when the holding process dies; ``DIR/.lock.pid`` names the holder for the message.
    """
    try:
        out_dir.mkdir(parents=True, exist_ok=True)
        lock = FileLock(out_dir / ".lock", timeout=0)
        lock.acquire()
    except Timeout:
        holder = _read_holder(out_dir)
        raise OutputBusyError(
            f"another rebuild is writing to {out_dir} (pid {holder}); wait for it to finish and retry"
        ) from None
    except OSError as exc:  # read-only, no permission, a file in the way, a name too long
        raise ConfigError(f"--out: output folder {out_dir} cannot be written: {exc.strerror or exc}") from None
    pid_file = out_dir / ".lock.pid"
    try:
        pid_file.write_text(str(os.getpid()))
        yield
    finally:
        pid_file.unlink(missing_ok=True)
        lock.release()


def _read_holder(out_dir: Path) -> str:
    try:
        return (out_dir / ".lock.pid").read_text().strip() or "unknown"
    except OSError:
        return "unknown"


def new_staging_dir(out_dir: Path) -> Path:
    """A fresh, empty work folder under ``DIR/.staging`` (call with the lock held)."""
    root = out_dir / STAGING
    if root.exists():  # leftovers of a failed or killed rebuild
        shutil.rmtree(root)
    path = root / uuid.uuid4().hex
    path.mkdir(parents=True)
    return path


def discard_staging(path: Path) -> None:
    """Remove a staging folder after a failure."""
    shutil.rmtree(path, ignore_errors=True)


def publish(staging: Path, out_dir: Path, vintage: str, links: list[str]) -> Path:
    """Move a finished staging folder into ``vintages/`` and point ``latest`` at it.

    ``links`` are file names inside the vintage that get a stable link at the
    top of ``out_dir`` (through ``latest``).
    """
    for name in links:
        link = out_dir / name
        if link.exists() and not link.is_symlink():
            raise PublishError(f"{link} exists and is not a valvol link; move it away and rebuild")
    vintages = out_dir / VINTAGES
    vintages.mkdir(exist_ok=True)
    target, n = vintages / vintage, 1
    while target.exists():  # two rebuilds of the same inputs within one second
        target, n = vintages / f"{vintage}-{n}", n + 1
    _fsync_tree(staging)
    os.rename(staging, target)
    try:
        staging.parent.rmdir()  # .staging/ itself, once empty
    except OSError:
        pass
    tmp_link = out_dir / f".{LATEST}.{uuid.uuid4().hex}"
    os.symlink(Path(VINTAGES) / target.name, tmp_link)
    os.replace(tmp_link, out_dir / LATEST)  # atomic switch
    _fsync_dir(out_dir)
    for name in links:
        link = out_dir / name
        if not link.is_symlink():
            os.symlink(Path(LATEST) / name, link)
    return target


def _fsync_tree(path: Path) -> None:
    for p in path.rglob("*"):
        if p.is_file():
            with p.open("rb") as fh:
                os.fsync(fh.fileno())
    _fsync_dir(path)


def _fsync_dir(path: Path) -> None:
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)
