"""The compiled-kernel cache: a writable place whatever the environment, a one-line notice
when it is not the usual one, the first-run compile announced, no traceback."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

from cli_helpers import unwritable_folder  # noqa: F401 (fixture)

from bouncelike.kernel_cache import choose_cache

REPO = Path(__file__).resolve().parents[1]
KERNELS = (Path("/pkg/background"), Path("/pkg/perturbations"))


def _choose(environ, writable):
    return choose_cache(environ, can_write=lambda p: any(str(p).startswith(w)
                                                         for w in writable),
                        kernel_dirs=KERNELS, temporary=lambda: Path("/tmp/bl-numba"))


def test_user_setting_is_kept_when_writable():
    assert _choose({"NUMBA_CACHE_DIR": "/mine"}, ["/mine"]) == (Path("/mine"), "/mine", None)


def test_package_folder_is_the_default():
    folder, _, notice = _choose({"HOME": "/home/u"}, ["/pkg", "/home/u"])
    assert folder is None and notice is None  # numba's own __pycache__ folders


def test_read_only_package_uses_the_user_cache_quietly():
    folder, _, notice = _choose({"HOME": "/home/u"}, ["/home/u", "/tmp"])
    assert folder == Path("/home/u/.cache/bouncelike/numba") and notice is None
    folder, _, _ = _choose({"HOME": "/home/u", "XDG_CACHE_HOME": "/xdg"}, ["/xdg"])
    assert folder == Path("/xdg/bouncelike/numba")


def test_no_home_falls_back_to_a_temporary_folder_with_a_notice():
    folder, where, notice = _choose({}, ["/tmp"])
    assert folder == Path("/tmp/bl-numba") and "temporary folder '/tmp/bl-numba'" in notice
    assert "\n" not in notice


def test_unwritable_user_setting_is_named_and_replaced():
    folder, _, notice = _choose({"NUMBA_CACHE_DIR": "/ro", "HOME": "/home/u"},
                                ["/pkg", "/home/u"])
    assert folder == Path("/home/u/.cache/bouncelike/numba")
    assert notice.startswith("NUMBA_CACHE_DIR '/ro' is not writable; ")


def test_nothing_writable_switches_caching_off():
    folder, where, notice = _choose({"NUMBA_CACHE_DIR": "/ro"}, [])
    assert folder is None and where == "none" and "caching is off" in notice


def _efolds(tmp_path, env, out, *flags):
    return subprocess.run([sys.executable, "-m", "bouncelike", "efolds", "run.toml", "--output",
                           str(tmp_path / out), "--json", *flags], cwd=tmp_path, env=env,
                          capture_output=True, text=True, timeout=600)


def test_unwritable_cache_and_no_home_fall_back_and_compile_once(tmp_path,
                                                                 unwritable_folder):  # noqa: F811
    (tmp_path / "run.toml").write_text('[potential]\nname = "quadratic"\nmass = 1.21e-6\n\n'
                                       '[efolds]\nn_samples = 2\nconvergence_samples = 0\n')
    temp = tmp_path / "tmp"
    temp.mkdir()
    blocked = unwritable_folder / "numba-cache"
    env = {"PYTHONPATH": str(REPO), "PATH": os.environ.get("PATH", "/usr/bin:/bin"),
           "NUMBA_CACHE_DIR": str(blocked), "TMPDIR": str(temp)}  # no HOME
    cache = temp / f"bouncelike-numba-{os.getuid()}"
    first = _efolds(tmp_path, env, "a")
    assert first.returncode == 0, first.stderr
    json.loads(first.stdout)  # stdout is the JSON object alone
    lines = [x for x in first.stderr.splitlines() if x.startswith("bouncelike:")]
    assert lines[0] == (f"bouncelike: note: NUMBA_CACHE_DIR '{blocked}' is not writable; "
                        f"compiled kernels are cached in the temporary folder '{cache}' (set "
                        "NUMBA_CACHE_DIR or HOME to a writable folder to keep them)")
    assert lines[1] == (f"bouncelike: compiling kernels (first run only; cached in {cache}) "
                        "...")
    assert "Traceback" not in first.stderr and "cannot cache" not in first.stderr
    assert json.loads(first.stdout)["timing"]["compile_seconds"] > 0
    assert list(cache.rglob("*.nbi"))  # the kernels were cached there
    # second run: loaded from that cache, nothing compiled, no compile notice
    second = _efolds(tmp_path, env, "b")
    assert second.returncode == 0, second.stderr
    assert "compiling kernels" not in second.stderr
    assert json.loads(second.stdout)["timing"]["compile_seconds"] == 0
    # --quiet: no notice at all
    quiet = _efolds(tmp_path, env, "c", "--quiet")
    assert quiet.returncode == 0 and quiet.stderr == ""
