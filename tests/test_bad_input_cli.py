"""Every kind of bad input a new user tried (issue #13) answers with exit 2 (or 1 where the input
is valid but the design fails), one line per problem, no traceback, within 5 s; and the command
line works from a read-only install."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import time
from pathlib import Path

import pytest

from optimiser.cli import main
from optimiser.formats.cache import choose_cache_folder

ROOT = Path(__file__).resolve().parent.parent
BRIDGE = (ROOT / "specs" / "demo-design-bridge.yaml").read_text(encoding="utf-8")
BUILD = (ROOT / "specs" / "demo-design-build.yaml").read_text(encoding="utf-8")


def _bomb(inside=False):
    lines = ['a0: &a0 ["x", "x", "x", "x", "x", "x", "x", "x", "x"]']
    lines += [f"a{i}: &a{i} [" + ", ".join([f"*a{i - 1}"] * 9) + "]" for i in range(1, 10)]
    if inside:
        return BRIDGE.replace("rectifier:\n", "rectifier:\n  " + "\n  ".join(lines) + "\n", 1)
    return "\n".join(lines) + "\n" + BRIDGE


def _sub(old, new, text=BRIDGE):
    assert old in text
    return text.replace(old, new, 1)


CASES = {
    "utf-16": BRIDGE.encode("utf-16"),
    "latin-1": BRIDGE.replace("Kestrel", "Kestrel caf\xe9").encode("latin-1"),
    "binary": bytes(range(256)) * 8,
    "binary-text": b"mains: \x80\x81\xfe\xff\x00\x01 {voltage: 230 V}\n",
    "complex-key": "? [a, b]\n: 1\n" + BRIDGE,
    "recursive-alias": "loop: &l [*l]\n" + BRIDGE,
    "alias-bomb": _bomb(),
    "alias-bomb-in-field": _bomb(inside=True),
    "1 MHz mains": _sub("frequency: 50 Hz", "frequency: 1 MHz"),
    "million-character unit": _sub("capacitance: 150 uF", "capacitance: 150 " + "u" * 10**6 + "F"),
    "sag_hold 10000 s": BRIDGE + "conditions: {sag_hold: 10000 s}\n",
    "1 uV secondary": _sub("secondary_voltage: 325 V", "secondary_voltage: 1 uV"),
    "10^6 A load": _sub("load: {current: 4 mA}", "load: {current: 1e6 A}"),
    "1 uT build": BUILD.replace(BUILD[BUILD.index("max_flux_density:"):].split("\n")[0],
                                "max_flux_density: 1 uT"),
    "collapsed preamp (no convergence)": _sub("load: {current: 4 mA}", "load: {current: 900 mA}"),
    "collapsed preamp (converged)": _sub("load: {current: 4 mA}", "load: {current: 60 mA}"),
    "bad unit and unknown valve": _sub("diode: 1N4007", "diode: 1N9999",
                                       _sub("capacitance: 150 uF", "capacitance: 150 uQ")),
}


@pytest.fixture(scope="module", autouse=True)
def compiled():
    """Compile (or load) the loops once, so that the 5 s limit times the answers only."""
    main(["evaluate", str(ROOT / "specs" / "demo-design-bridge.yaml"), "--json"])


@pytest.mark.parametrize("case", sorted(CASES))
def test_bad_input_exits_2_with_one_line_per_problem_within_5_s(case, tmp_path, capsys):
    path = tmp_path / "design.yaml"
    payload = CASES[case]
    path.write_bytes(payload if isinstance(payload, bytes) else payload.encode("utf-8"))
    start = time.perf_counter()
    status = main(["evaluate", str(path)])
    elapsed = time.perf_counter() - start
    err = capsys.readouterr().err
    assert status == 2, err
    assert elapsed < 5.0, elapsed
    lines = err.strip().splitlines()
    assert lines and all(line.startswith("error: ") for line in lines), err
    assert "Traceback" not in err
    if case == "bad unit and unknown valve":
        assert len(lines) == 2 and "uQ" in lines[0] and "1N9999" in lines[1]
    if case.startswith("collapsed"):
        assert "no working supply" in err and "preamp" in err or "did not converge" in err


def test_a_design_that_fails_a_check_exits_1_and_the_demos_pass_or_say_why(capsys):
    for path in sorted((ROOT / "specs").glob("demo-design-*.yaml")):
        status = main(["evaluate", str(path)])
        out = capsys.readouterr().out
        if status == 1:
            assert "FAILS" in out
            assert "fails" in path.read_text(encoding="utf-8").split("mains:")[0], path
        else:
            assert status == 0 and "all checks pass" in out, path


def test_the_cache_folder_moves_to_the_users_when_the_package_is_not_writable(tmp_path):
    env = {"HOME": str(tmp_path / "home")}
    chosen = choose_cache_folder(tmp_path / "pkg", env, can_write=lambda f: "pkg" not in str(f))
    assert chosen == str(tmp_path / "home" / ".cache" / "railwright" / "numba")
    assert env["NUMBA_CACHE_DIR"] == chosen
    env = {"XDG_CACHE_HOME": str(tmp_path / "xdg"), "HOME": "/nonexistent"}
    assert choose_cache_folder(tmp_path / "pkg", env, can_write=lambda f: "pkg" not in str(f)) \
        == str(tmp_path / "xdg" / "railwright" / "numba")
    assert choose_cache_folder(tmp_path / "pkg", {}, can_write=lambda f: True) is None


def _unprivileged():
    """A command prefix that runs a program without the power to write read-only folders:
    nothing for an ordinary user; for root, root with every capability dropped (so that the
    folder's mode bits bind it, as they bind any user of a system-wide install)."""
    if os.geteuid() != 0:
        return []
    if shutil.which("setpriv") is None:
        pytest.skip("running as root without setpriv: cannot make a folder read-only to root")
    return ["setpriv", "--bounding-set=-all", "--inh-caps=-all"]


def test_the_cli_runs_from_a_read_only_install(tmp_path):
    """A copy of the package in a folder made read-only, run by a user who cannot write it:
    the loops compile into the user's cache folder (announced, with the time), and the next run
    loads them from there."""
    prefix = _unprivileged()
    site = tmp_path / "site"
    shutil.copytree(ROOT / "optimiser", site / "optimiser",
                    ignore=shutil.ignore_patterns("__pycache__", "*.nbi", "*.nbc"))
    for folder, dirs, files in os.walk(site):
        for name in files:
            os.chmod(Path(folder) / name, 0o444)
        os.chmod(folder, 0o555)
    home = tmp_path / "home"
    home.mkdir()
    env = {k: v for k, v in os.environ.items()
           if not k.startswith(("NUMBA_", "PYTHON", "XDG_"))}
    env.update(HOME=str(home), PYTHONDONTWRITEBYTECODE="1", PYTHONPATH=str(site))
    command = prefix + [sys.executable, "-m", "optimiser", "evaluate",
                        str(ROOT / "specs" / "demo-design-bridge.yaml"), "--json"]
    probe = subprocess.run(prefix + ["touch", str(site / "optimiser" / "probe")],
                           capture_output=True)
    assert probe.returncode != 0, "the package folder is writable: the test would prove nothing"
    try:
        first = subprocess.run(command, cwd=tmp_path, env=env, capture_output=True, text=True,
                               timeout=600)
        assert first.returncode == 0, first.stderr
        assert "Traceback" not in first.stderr and "cannot cache" not in first.stderr
        assert "compiling the simulation's loops" in first.stderr
        assert "compiled the loops in" in first.stderr and ".cache/railwright" in first.stderr
        assert list((home / ".cache" / "railwright" / "numba").rglob("*.nbi"))
        second = subprocess.run(command, cwd=tmp_path, env=env, capture_output=True, text=True,
                                timeout=600)
        assert second.returncode == 0, second.stderr
        assert "compiling" not in second.stderr, second.stderr
        # a service user whose home cannot be written either (the case the issue hit: numba's
        # own fallback, ~/.cache/numba, fails then with "no locator available"): the system's
        # temporary folder holds the cache
        locked = tmp_path / "locked-home"
        locked.mkdir(mode=0o555)
        scratch = tmp_path / "tmp"
        scratch.mkdir()
        env.update(HOME=str(locked), TMPDIR=str(scratch))
        third = subprocess.run(command, cwd=tmp_path, env=env, capture_output=True, text=True,
                               timeout=600)
        assert third.returncode == 0, third.stderr
        assert "cannot cache" not in third.stderr and "Traceback" not in third.stderr
        assert list(scratch.rglob("*.nbi")), third.stderr
    finally:
        for folder, dirs, files in os.walk(site):
            os.chmod(folder, 0o755)
