"""Checks shared by the command-line tests: the provenance block and one-line errors."""

from __future__ import annotations

import hashlib
import os
import tempfile
from pathlib import Path

import pytest

import bouncelike

# the documented keys of every provenance block (bouncelike/provenance.py docstring)
PROVENANCE_KEYS = {"package", "version", "command", "config", "constraint_sets", "plugins",
                   "python", "upstream"}


def check_provenance(block: dict, command: str, config: str | Path | None = None,
                     sets: tuple[str, ...] | None = None) -> None:
    """The block names this package and version, the command, the configuration by the
    SHA-256 of its bytes, and every constraint set by citation and file hash."""
    assert set(block) == PROVENANCE_KEYS, sorted(block)
    assert block["package"] == "bouncelike" and block["version"] == bouncelike.__version__
    assert block["command"] == command
    if config is None:
        assert block["config"] is None
    else:
        path = Path(config)
        assert block["config"]["path"] == str(path.resolve())
        assert block["config"]["sha256"] == hashlib.sha256(path.read_bytes()).hexdigest()
    if sets is not None:
        assert [s["name"] for s in block["constraint_sets"]] == list(sets)
    for s in block["constraint_sets"]:
        assert s["citation"] and s["arxiv"], s
        if s["path"] is not None and Path(s["path"]).is_file():
            assert s["sha256"] == hashlib.sha256(Path(s["path"]).read_bytes()).hexdigest()
    assert isinstance(block["plugins"], list)


def error_text(err: str) -> str:
    """Standard error without the progress notices a cold run prints before it (the kernel
    compile notice appears only when the kernel cache is empty, e.g. on a fresh machine)."""
    return "\n".join(line for line in err.strip().splitlines()
                     if not line.startswith(PROGRESS_PREFIXES)).strip()


# progress lines a command may print on stderr before failing (bouncelike/kernel_cache.py)
PROGRESS_PREFIXES = ("bouncelike: compiling kernels",)


def one_line_error(err: str, needle: str = "") -> str:
    """The stderr of a failed command: exactly one line, ``bouncelike: error: ...``, after
    any progress notices."""
    text = error_text(err)
    assert text.startswith("bouncelike: error: ") and "\n" not in text, err
    assert "Traceback" not in err
    assert needle in text, text
    return text


def listing(folder: Path) -> list[str]:
    """Every path below ``folder`` (relative), to show that nothing was written."""
    return sorted(str(p.relative_to(folder)) for p in folder.rglob("*"))


@pytest.fixture
def unwritable_folder(tmp_path):
    """An existing folder this process cannot create files in: a read-only folder for an
    ordinary user; for root (which ignores permission bits) a sysfs folder. Skips when none
    is available."""
    if hasattr(os, "geteuid") and os.geteuid() != 0:
        folder = tmp_path / "read_only"
        folder.mkdir()
        folder.chmod(0o555)
        yield folder
        folder.chmod(0o755)
        return
    folder = Path("/sys/kernel")
    try:
        fd, probe = tempfile.mkstemp(dir=folder)
    except OSError:
        yield folder
        return
    os.close(fd)
    os.unlink(probe)
    pytest.skip("no unwritable folder available to this user")
