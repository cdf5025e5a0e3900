"""Run the ``bandsmith`` command in-process, or (for the few smoke tests) as the installed program.

:func:`run_command` calls ``bandsmith.app.entry.main(argv)`` — the function the installed entry
point and ``python -m bandsmith.app`` call — with stdout and stderr captured as text, the exit
status taken from its return value or from ``SystemExit`` (argparse's ``--help`` and usage
errors), and the working folder and environment variables set for the call only. The result has
the fields of :class:`subprocess.CompletedProcess`, with the newlines a text-mode pipe would give,
so a test reads it as it would read a subprocess's.

:func:`installed_command` finds the installed ``bandsmith`` program for the smoke tests (marked
``cli``); when it is missing the test fails, it is not skipped.
"""

from __future__ import annotations

import contextlib
import io
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from bandsmith.app.entry import main as entry_main

__all__ = ["run_command", "installed_command", "run_installed"]


def _text(stream: io.TextIOWrapper) -> str:
    """What a text-mode pipe would have read: UTF-8, universal newlines."""
    stream.flush()
    text = stream.buffer.getvalue().decode("utf-8")
    return text.replace("\r\n", "\n").replace("\r", "\n")


@contextlib.contextmanager
def _environment(cwd, env):
    old_cwd, old_env = os.getcwd(), dict(os.environ)
    try:
        if cwd is not None:
            os.chdir(cwd)
        if env:
            os.environ.update({k: str(v) for k, v in env.items()})
        yield
    finally:
        os.chdir(old_cwd)
        os.environ.clear()
        os.environ.update(old_env)


def run_command(args, *, cwd=None, env=None) -> subprocess.CompletedProcess:
    """``bandsmith ARGS…`` through ``bandsmith.app.entry.main``; stdout, stderr and exit status.

    Parameters
    ----------
    args : sequence of str or path
        The command line without the program name.
    cwd : path, optional
        The working folder during the call.
    env : dict, optional
        Environment variables added during the call (``BANDSMITH_SHELF``, say).
    """
    argv = [str(a) for a in args]
    out = io.TextIOWrapper(io.BytesIO(), encoding="utf-8", newline="")
    err = io.TextIOWrapper(io.BytesIO(), encoding="utf-8", newline="")
    with _environment(cwd, env), contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            code = entry_main(argv)
        except SystemExit as exc:  # argparse: --help (0) and usage errors (2)
            code = exc.code if isinstance(exc.code, int) else (0 if exc.code is None else 1)
            if not isinstance(exc.code, (int, type(None))):
                print(exc.code, file=sys.stderr)
    return subprocess.CompletedProcess(["bandsmith", *argv], code, _text(out), _text(err))


def installed_command() -> str:
    """The installed ``bandsmith`` program (next to this interpreter, else on PATH); fails if absent."""
    here = Path(sys.executable).with_name("bandsmith")
    found = str(here) if here.exists() else shutil.which("bandsmith")
    if not found:
        pytest.fail("the bandsmith command is not installed: run `pip install -e .` in this environment")
    return found


def run_installed(args, *, cwd=None, env=None, timeout=300) -> subprocess.CompletedProcess:
    """``bandsmith ARGS…`` as a real process (the smoke tests): the installed program itself."""
    full_env = dict(os.environ, PYTHONIOENCODING="utf-8", **{k: str(v) for k, v in (env or {}).items()})
    return subprocess.run([installed_command(), *map(str, args)], capture_output=True, text=True,
                          encoding="utf-8", cwd=cwd, env=full_env, timeout=timeout)
