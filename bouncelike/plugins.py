"""Plugin files: user code the user chose to run, named on the command line.

A configuration file is data and never names code. Code that extends the package (today: user
potentials, :func:`bouncelike.background.potentials.register_potential`) is either run by the
user's own Python script, or written in a plugin file passed explicitly on the command line::

    bouncelike efolds my_run.toml --plugin my_potentials.py

The file is executed once (as a Python script, with ``__name__ = "bouncelike_plugin"``) before
the configuration is read; every registration it makes records the file's resolved path and its
SHA-256, and :func:`loaded_plugins` lists the files for the provenance of every output. Worker
processes inherit the registrations (fork) or load the same files again (MPI ranks run the same
command line).
"""

from __future__ import annotations

import hashlib
import runpy
from pathlib import Path
from typing import Any

from .errors import InputError

_LOADED: dict[str, str] = {}


def load_plugin(path: str | Path) -> dict[str, str]:
    """Execute the plugin file ``path`` once; return its provenance {path, sha256}."""
    p = Path(path)
    if p.is_dir():
        raise InputError(f"--plugin '{p}' is a directory; allowed: a Python file (.py)")
    if not p.is_file():
        raise InputError(f"--plugin '{p}' does not exist; allowed: a Python file (.py)")
    if p.suffix != ".py":
        raise InputError(f"--plugin '{p}' is not a .py file; allowed: a Python file (.py)")
    resolved = str(p.resolve())
    data = p.read_bytes()
    digest = hashlib.sha256(data).hexdigest()
    if resolved in _LOADED:
        return {"path": resolved, "sha256": _LOADED[resolved]}
    from .background import potentials

    previous = potentials.REGISTRATION_ORIGIN
    potentials.REGISTRATION_ORIGIN = f"plugin {resolved} (sha256 {digest[:16]})"
    try:
        runpy.run_path(resolved, run_name="bouncelike_plugin")
    except InputError:
        raise
    except SyntaxError as exc:
        raise InputError(f"--plugin '{p}' has a syntax error at line {exc.lineno}: "
                         f"{exc.msg}") from None
    except Exception as exc:  # the user's code failed: one line, never a traceback
        raise InputError(f"--plugin '{p}' failed while loading: "
                         f"{type(exc).__name__}: {exc}") from None
    finally:
        potentials.REGISTRATION_ORIGIN = previous
    _LOADED[resolved] = digest
    return {"path": resolved, "sha256": digest}


def loaded_plugins() -> list[dict[str, Any]]:
    """Plugin files executed in this process: [{path, sha256}] (provenance of outputs)."""
    return [{"path": k, "sha256": v} for k, v in _LOADED.items()]
