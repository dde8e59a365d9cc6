"""Shared test set-up: external programs that some tests need.

A test that needs an external program (ngspice today, headless Chromium later) says so with a
marker — ``@pytest.mark.ngspice``, or generically ``@pytest.mark.requires_tool("name")`` — or calls
:func:`require_tool` itself. Where the program is missing the test is skipped with a reason that
says how to install it; but with the environment variable ``RAILWRIGHT_REQUIRE_TOOLS=1`` (CI sets
it) a missing program fails the test, so a CI image without it cannot pass silently.
"""

from __future__ import annotations

import os
import shutil
from dataclasses import dataclass

import pytest

REQUIRE_TOOLS_VARIABLE = "RAILWRIGHT_REQUIRE_TOOLS"


@dataclass(frozen=True)
class Tool:
    """An external program: the executable names tried in order, and how to install it."""

    executables: tuple[str, ...]
    install: str


# Programs the test suite knows. A marker with the same name as a key marks a test that needs it.
TOOLS: dict[str, Tool] = {
    "ngspice": Tool(executables=("ngspice",), install="install Debian package ngspice"),
    "chromium": Tool(executables=("chromium", "chromium-browser"),
                     install="install Debian package chromium"),
}


def tools_required() -> bool:
    """True when missing tools must fail the tests (``RAILWRIGHT_REQUIRE_TOOLS=1``)."""
    return os.environ.get(REQUIRE_TOOLS_VARIABLE, "").strip() == "1"


def require_tool(name: str, *, executables: tuple[str, ...] | None = None, install: str | None = None) -> str:
    """Return the path of an external program, or skip (or fail) the calling test without it.

    Parameters
    ----------
    name : str
        The tool's name, a key of :data:`TOOLS` or any program name.
    executables : tuple of str, optional
        Executable names to look for on PATH, in order. Default: the tool's entry in
        :data:`TOOLS`, else ``(name,)``.
    install : str, optional
        How to install it, for the skip reason. Default: the tool's entry in :data:`TOOLS`.

    Returns
    -------
    str
        Absolute path of the first executable found.
    """
    known = TOOLS.get(name)
    candidates = executables or (known.executables if known else (name,))
    for executable in candidates:
        path = shutil.which(executable)
        if path:
            return path
    how = install or (known.install if known else f"install {name}")
    reason = f"{name} not found on PATH; {how}"
    if tools_required():
        pytest.fail(f"{reason} ({REQUIRE_TOOLS_VARIABLE}=1: required tools must be present)", pytrace=False)
    pytest.skip(reason)


def pytest_configure(config):
    config.addinivalue_line(
        "markers",
        "requires_tool(name, executables=None, install=None): the test needs an external program "
        "(skipped where absent; a failure when RAILWRIGHT_REQUIRE_TOOLS=1)",
    )
    for name in TOOLS:
        config.addinivalue_line("markers", f"{name}: the test needs {name} (see tests/conftest.py)")


def pytest_runtest_setup(item):
    for name in TOOLS:
        if item.get_closest_marker(name) is not None:
            require_tool(name)
    for marker in item.iter_markers("requires_tool"):
        require_tool(*marker.args, **marker.kwargs)


@pytest.fixture
def tool():
    """The :func:`require_tool` function, for tests that decide at run time which program they need."""
    return require_tool
