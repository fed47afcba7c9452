"""Atomic output: nothing half-written is ever left behind.

Commands compute everything first and only then write. Each file is written to a temporary
name in the destination folder and renamed into place (``os.replace`` is atomic on POSIX), so a
reader never sees a partial file, and a failure before the rename leaves no output at all.

A command that writes several files makes them one set with :func:`output_set`::

    with output_set(out_dir):
        write_csv_atomic(out_dir / "table.csv", frame)
        save_figure_atomic(fig, out_dir / "figure.pdf")

Inside the block the atomic writers put every file below ``out_dir`` into a staging folder
(``out_dir/.staging-<pid>-*``); when the block ends without an error the set is checked (no
folder in the way of a file) and moved into place, replacing older versions, and an error
during the moves puts the old versions back. When the block raises, nothing is moved and the
staging folder is removed: the destination is as it was (an output folder the set created is
removed again). :func:`clean_orphans` removes what a killed process leaves behind.
"""

from __future__ import annotations

import contextlib
import contextvars
import json
import os
import shutil
import tempfile
from collections.abc import Callable, Iterable, Iterator
from pathlib import Path
from typing import Any


def _current_umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


_UMASK = _current_umask()


def _atomic(path: str | Path, write: Callable[[str], None]) -> Path:
    path = Path(path)
    active = _ACTIVE_SET.get()
    if active is not None and active.covers(path):
        return active.stage(path, write)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    os.close(fd)
    try:
        write(tmp)
        os.chmod(tmp, 0o666 & ~_UMASK)  # mkstemp creates 0600; give the usual permissions
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return path


def write_text_atomic(path: str | Path, text: str) -> Path:
    """Write ``text`` to ``path`` atomically (UTF-8)."""

    def write(tmp: str) -> None:
        with open(tmp, "w", encoding="utf-8") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())

    return _atomic(path, write)


def write_bytes_atomic(path: str | Path, data: bytes) -> Path:
    """Write ``data`` to ``path`` atomically."""

    def write(tmp: str) -> None:
        with open(tmp, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())

    return _atomic(path, write)


def write_json_atomic(path: str | Path, obj: Any) -> Path:
    """Write ``obj`` as indented JSON atomically (numpy numbers and paths are converted)."""
    text = json.dumps(obj, indent=2, sort_keys=False, default=_jsonable)
    return write_text_atomic(path, text + "\n")


def write_csv_atomic(path: str | Path, frame: Any, **kwargs: Any) -> Path:
    """Write a pandas DataFrame as CSV atomically."""
    kwargs.setdefault("index", False)
    return write_text_atomic(path, frame.to_csv(**kwargs))


def save_figure_atomic(fig: Any, path: str | Path, **kwargs: Any) -> Path:
    """Save a matplotlib figure atomically; the format follows the file suffix."""
    path = Path(path)
    kwargs.setdefault("format", path.suffix.lstrip(".") or "png")
    return _atomic(path, lambda tmp: fig.savefig(tmp, **kwargs))


def _jsonable(obj: Any) -> Any:
    """Fallback for json.dumps: numpy scalars and arrays, paths."""
    try:
        import numpy as np

        if isinstance(obj, np.generic):
            return obj.item()
        if isinstance(obj, np.ndarray):
            return obj.tolist()
    except ImportError:  # pragma: no cover
        pass
    if isinstance(obj, Path):
        return str(obj)
    raise TypeError(f"cannot serialise {type(obj).__name__} to JSON")


def json_safe(value: Any) -> Any:
    """Turn NaN and infinities into None (JSON has no NaN) recursively."""
    import math

    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {k: json_safe(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_safe(v) for v in value]
    try:
        import numpy as np

        if isinstance(value, np.generic):
            return json_safe(value.item())
        if isinstance(value, np.ndarray):
            return json_safe(value.tolist())
    except ImportError:  # pragma: no cover
        pass
    return value


def append_text(path: str | Path, text: str) -> int:
    """Append ``text`` (UTF-8) to ``path`` and flush it to disk; returns the new size in bytes.

    Appending is not atomic: a reader that needs consistency records the size after each
    append (as the checkpoints of a posterior run do) and cuts the file back to it."""
    with open(path, "ab") as fh:
        fh.write(text.encode("utf-8"))
        fh.flush()
        os.fsync(fh.fileno())
        return fh.tell()


# -- sets of files --------------------------------------------------------------------------

_ACTIVE_SET: contextvars.ContextVar[OutputSet | None] = contextvars.ContextVar(
    "bouncelike_output_set", default=None)
_STAGING_PREFIX = ".staging-"


class OutputSet:
    """Files written below ``root`` collected in a staging folder, then moved in as one set.

    Use it through :func:`output_set`. ``files`` lists the final paths in the order written.
    """

    def __init__(self, root: str | Path):
        self.root = Path(root)
        self.files: list[Path] = []
        self._staged: dict[Path, Path] = {}
        self._created: list[Path] = []  # folders this set created (removed again on failure)
        for parent in reversed((self.root, *self.root.parents)):
            if not parent.exists():
                self._created.append(parent)
        self.root.mkdir(parents=True, exist_ok=True)
        clean_orphans(self.root, temporary_files=False)
        self.staging = Path(tempfile.mkdtemp(prefix=f"{_STAGING_PREFIX}{os.getpid()}-",
                                             dir=self.root))

    def covers(self, path: Path) -> bool:
        """True when ``path`` lies below the set's root (it is then staged)."""
        return _below(Path(path), self.root)

    def stage(self, path: Path, write: Callable[[str], None]) -> Path:
        """Write one file of the set into the staging folder; returns its final path."""
        final = Path(path)
        rel = os.path.relpath(os.path.abspath(final), os.path.abspath(self.root))
        staged = self.staging / rel
        staged.parent.mkdir(parents=True, exist_ok=True)
        write(str(staged))
        os.chmod(staged, 0o666 & ~_UMASK)
        if final not in self._staged:
            self.files.append(final)
        self._staged[final] = staged
        return final

    def commit(self) -> list[Path]:
        """Move the staged files into place; on any error restore what was there before."""
        for final in self.files:
            _check_not_blocked(final)
        backups = self.staging / ".previous"
        done: list[tuple[Path, Path | None]] = []
        try:
            for i, final in enumerate(self.files):
                for parent in reversed(final.parents):
                    if not parent.exists():
                        parent.mkdir()
                        self._created.append(parent)
                backup = None
                if final.exists():
                    backups.mkdir(exist_ok=True)
                    backup = backups / str(i)
                    os.link(final, backup)
                os.replace(self._staged[final], final)
                done.append((final, backup))
        except BaseException:
            for final, backup in reversed(done):
                if backup is not None:
                    os.replace(backup, final)
                else:
                    with contextlib.suppress(FileNotFoundError):
                        os.unlink(final)
            raise
        finally:
            shutil.rmtree(self.staging, ignore_errors=True)
        return list(self.files)

    def discard(self) -> None:
        """Drop the staged files and the folders this set created (when left empty)."""
        shutil.rmtree(self.staging, ignore_errors=True)
        for folder in sorted(self._created, key=lambda p: len(p.parts), reverse=True):
            with contextlib.suppress(OSError):
                folder.rmdir()  # only when empty


@contextlib.contextmanager
def output_set(root: str | Path) -> Iterator[OutputSet]:
    """Make every atomic write below ``root`` in the block part of one set (module docstring).

    Yields the :class:`OutputSet`; its ``files`` are the final paths once the block is over.
    """
    current = OutputSet(root)
    token = _ACTIVE_SET.set(current)
    try:
        yield current
    except BaseException:
        _ACTIVE_SET.reset(token)
        current.discard()
        raise
    _ACTIVE_SET.reset(token)
    try:
        current.commit()
    except BaseException:
        current.discard()
        raise


def table_figure_summary_names(stem: str, table: str) -> dict[str, str]:
    """File names of a command's usual output set (:func:`write_table_figure_summary`): the
    table ``table``, the figure ``<stem>.pdf`` and ``<stem>.png``, ``<stem>_summary.json``."""
    return {"table": table, "figure_pdf": f"{stem}.pdf", "figure_png": f"{stem}.png",
            "summary": f"{stem}_summary.json"}


def write_table_figure_summary(files: dict[str, Path], frame: Any, float_format: str,
                               fig: Any, summary: Any) -> None:
    """A command's usual outputs as one set (all or none), at the paths ``files`` (keys of
    :func:`table_figure_summary_names`, all in one folder): the DataFrame ``frame`` as CSV,
    the matplotlib figure as PDF and PNG (150 dpi), ``summary`` as JSON. The figure is closed
    afterwards."""
    import matplotlib.pyplot as plt

    try:
        with output_set(Path(files["table"]).parent):
            write_csv_atomic(files["table"], frame, float_format=float_format)
            save_figure_atomic(fig, files["figure_pdf"])
            save_figure_atomic(fig, files["figure_png"], dpi=150)
            write_json_atomic(files["summary"], json_safe(summary))
    finally:
        plt.close(fig)


def _check_not_blocked(final: Path) -> None:
    """InputError when a folder is where the file ``final`` goes, or a file is where one of
    its folders goes."""
    from .errors import InputError

    if final.is_dir():
        blocker, what = final, "a folder"
    else:
        blocker = next((p for p in final.parents if p.exists() and not p.is_dir()), None)
        what = "a file"
    if blocker is not None:
        raise InputError(f"cannot write '{final}': {what} '{blocker}' is in the way; "
                         "move it away or choose another output folder (nothing "
                         "was written)")


def check_output_folder(folder: str | Path, files: Iterable[str] = (),
                        option: str = "--output") -> Path:
    """Check, before any computation, that the outputs can be written into ``folder``.

    Raises :class:`~bouncelike.errors.InputError` (one line, nothing created) when ``folder``
    is a file, when a file is where one of its parent folders should be, when the nearest
    existing folder above it is not writable (probed by creating and removing a temporary
    file), or when one of ``files`` (names relative to ``folder``) is an existing folder.
    ``option`` names where the folder came from in messages. Returns ``folder``."""
    from .errors import InputError

    folder = Path(folder)
    if folder.exists() and not folder.is_dir():
        raise InputError(f"{option} '{folder}' is a file; allowed: a folder (existing or "
                         "to be created)")
    existing = folder
    while not existing.exists() and existing != existing.parent:
        existing = existing.parent
    if not existing.is_dir():
        raise InputError(f"cannot create the output folder '{folder}': '{existing}' is a "
                         "file; choose another folder")
    try:
        fd, probe = tempfile.mkstemp(prefix=".bouncelike-probe-", dir=existing)
        os.close(fd)
        os.unlink(probe)
    except OSError as exc:
        where = "" if existing == folder else f" (its nearest existing folder '{existing}')"
        raise InputError(f"output folder '{folder}'{where} is not writable "
                         f"({exc.strerror or exc}); choose another with {option} DIR"
                         ) from None
    for name in files:
        _check_not_blocked(folder / name)
    return folder


def clean_orphans(folder: str | Path, temporary_files: bool = True) -> list[Path]:
    """Remove what a killed writer left in ``folder``: staging folders of processes that no
    longer run and, with ``temporary_files``, the temporary files of :func:`_atomic`
    (``.<name>.*.tmp``; only safe where no other process writes, e.g. a locked run folder).
    Returns what was removed."""
    folder = Path(folder)
    removed: list[Path] = []
    if not folder.is_dir():
        return removed
    for entry in folder.iterdir():
        name = entry.name
        if name.startswith(_STAGING_PREFIX) and entry.is_dir():
            pid = name[len(_STAGING_PREFIX):].split("-", 1)[0]
            if pid.isdigit() and not process_exists(int(pid)):
                shutil.rmtree(entry, ignore_errors=True)
                removed.append(entry)
        elif temporary_files and name.startswith(".") and name.endswith(".tmp"):
            with contextlib.suppress(FileNotFoundError):
                entry.unlink()
                removed.append(entry)
    return removed


def process_exists(pid: int) -> bool:
    """True when a process with this PID exists on this machine (whoever owns it)."""
    if pid <= 0:
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def _below(path: Path, root: Path) -> bool:
    a, r = os.path.abspath(path), os.path.abspath(root)
    return a != r and os.path.commonpath([a, r]) == r
