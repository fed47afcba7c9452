"""Exclusive claim of a run folder by one process: the ``.lock`` file.

The lock file is one line of JSON written in one step (a complete file is linked into place,
so it is never seen half-written)::

    {"pid": 4242, "host": "node7", "process_start": "<boot id>:<start tick>", "since": "..."}

``process_start`` identifies the process beyond its PID: on Linux the boot id
(``/proc/sys/kernel/random/boot_id``) and the start time of the process in clock ticks since
boot (field 22 of ``/proc/<pid>/stat``); elsewhere it is absent. A lock is *stale* -- left by a
run that cannot be going on any more -- and is taken over when

* it is empty or not a lock of ours (unreadable),
* it was written on this host by a process that no longer exists,
* its PID now belongs to another process (different start time) or the host has rebooted
  since (different boot id).

Otherwise (a live holder on this host, or any holder on another host, whose processes cannot
be seen from here) the run is refused with a message that says how to clear the lock if the
holder is in fact gone. Locks of the older ``<pid> <host>`` form are read too.
"""

from __future__ import annotations

import contextlib
import json
import os
import socket
import time
from dataclasses import dataclass
from pathlib import Path

from ..errors import InputError
from ..io import process_exists

LOCK = ".lock"


def process_start(pid: int) -> str | None:
    """``<boot id>:<start tick>`` of a process on this machine, or None where unknown."""
    try:
        stat = Path(f"/proc/{pid}/stat").read_text()
        boot = Path("/proc/sys/kernel/random/boot_id").read_text().strip()
    except OSError:
        return None
    fields = stat[stat.rfind(")") + 2:].split()  # after "pid (command) "
    return f"{boot}:{fields[19]}" if len(fields) > 19 else None


def this_host() -> str:
    return socket.gethostname()


@dataclass(frozen=True)
class LockHolder:
    pid: int
    host: str
    process_start: str | None = None
    since: str = ""

    @classmethod
    def parse(cls, text: str) -> LockHolder | None:
        """The holder named by a lock file's text, or None when it is not a lock of ours."""
        text = text.strip()
        if text.startswith("{"):
            try:
                d = json.loads(text)
                return cls(int(d["pid"]), str(d["host"]), d.get("process_start") or None,
                           str(d.get("since", "")))
            except (ValueError, KeyError, TypeError):
                return None
        parts = text.split()
        if len(parts) == 2 and parts[0].isdigit():  # the older "<pid> <host>" form
            return cls(int(parts[0]), parts[1])
        return None

    def stale_reason(self) -> str | None:
        """Why this holder cannot be running any more, or None if it may be."""
        if self.host != this_host():
            return None
        if not process_exists(self.pid):
            return f"process {self.pid} no longer exists"
        now = process_start(self.pid)
        if self.process_start and now and now != self.process_start:
            if now.split(":")[0] != self.process_start.split(":")[0]:
                return "the machine has restarted since"
            return f"PID {self.pid} now belongs to another process"
        return None


class RunLock:
    """The lock of one run folder (a context manager: acquire on entry, release on exit).

    ``elsewhere`` completes the refusal with the way to run somewhere else that applies to
    the caller (e.g. "choose another sampling.run_name" or "give another --output folder").
    """

    def __init__(self, folder: str | Path, elsewhere: str = "choose another run folder"):
        self.folder = Path(folder)
        self.path = self.folder / LOCK
        self.elsewhere = elsewhere
        self.held = False
        self.taken_over: str | None = None  # why a stale lock was replaced, if one was

    def acquire(self) -> None:
        self.folder.mkdir(parents=True, exist_ok=True)
        me = {"pid": os.getpid(), "host": this_host(),
              "process_start": process_start(os.getpid()),
              "since": time.strftime("%Y-%m-%d %H:%M:%S %z")}
        tmp = self.folder / f".lock.{os.getpid()}.tmp"
        try:
            for _ in range(5):
                tmp.write_text(json.dumps(me) + "\n")
                try:
                    os.link(tmp, self.path)  # fails if a lock exists: never half-written
                except FileExistsError:
                    self._refuse_or_clear()
                    continue
                except FileNotFoundError:  # our temporary file was cleaned away: again
                    continue
                self.held = True
                return
        finally:
            with contextlib.suppress(FileNotFoundError):
                tmp.unlink()
        raise InputError(f"could not lock run folder '{self.folder}' (another process keeps "
                         f"creating '{self.path}'); {self.elsewhere}")

    def _refuse_or_clear(self) -> None:
        try:
            text = self.path.read_text(errors="replace")
        except FileNotFoundError:
            return
        holder = LockHolder.parse(text)
        if holder is None:
            self._clear("the lock file is empty" if not text.strip() else
                        "the lock file is not a lock of ours")
            return
        reason = holder.stale_reason()
        if reason is not None:
            self._clear(reason)
            return
        since = f" since {holder.since}" if holder.since else ""
        if holder.host != this_host():
            raise InputError(
                f"run folder '{self.folder}' is locked by process {holder.pid} on host "
                f"'{holder.host}'{since} (lock file '{self.path}'); if no run is going on "
                f"there any more, delete that file (rm '{self.path}') and try again, or "
                f"{self.elsewhere}")
        check = ("" if holder.process_start else
                 f"; if process {holder.pid} is not a bouncelike run, delete '{self.path}' "
                 "and try again")
        raise InputError(
            f"run folder '{self.folder}' is in use by process {holder.pid} on this machine"
            f"{since} (lock file '{self.path}'); wait for it to finish or stop it "
            f"(kill {holder.pid}){check}, or {self.elsewhere}")

    def _clear(self, reason: str) -> None:
        self.taken_over = reason
        with contextlib.suppress(FileNotFoundError):
            os.unlink(self.path)

    def release(self) -> None:
        if self.held:
            with contextlib.suppress(FileNotFoundError):
                os.unlink(self.path)
            self.held = False

    def __enter__(self) -> RunLock:
        self.acquire()
        return self

    def __exit__(self, *exc: object) -> None:
        self.release()
