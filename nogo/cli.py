"""The ``nogo`` command line.

Each subcommand lives in its own module under :mod:`nogo.commands` and
exposes ``register(subparsers)``; this file only discovers them, parses and
maps errors to exit status 2 without a traceback.  Exit status: 0 for a
positive answer (implied, consistent, confirmed), 1 for a negative one, 2 for
bad input or an error, 130 when interrupted (Ctrl-C).

Ctrl-C at any moment prints ``nogo: interrupted`` and nothing else, and the
status is 130: while the command modules are imported and after the answer
is printed a quiet handler ends the process at once; while a command runs,
Ctrl-C raises KeyboardInterrupt so that ``finally`` blocks (e.g. the removal
of a half-written temporary file in :mod:`nogo.atomic`) still run.  Python
drops an exception raised where it cannot propagate (a weakref callback such
as importlib's module-lock clean-up, a ``__del__``): such a swallowed
interrupt is delivered again at once (:func:`_unraisable`), and a command
that still returns after an interrupt leaves with 130 all the same.  The
program leaves through ``os._exit`` after flushing, with SIGINT blocked and
checked last, so no moment of CPython's own exit can lose an interrupt.
"""

from __future__ import annotations

import os
import signal
import sys


def _quiet_exit(signum=None, frame=None):  # pragma: no cover - exercised in a subprocess
    try:
        os.write(2, b"\nnogo: interrupted\n")
    finally:
        os._exit(130)


_interrupted = False


def _raise_interrupt(signum=None, frame=None):  # pragma: no cover - exercised in a subprocess
    """While a command runs: remember the interrupt, then raise it (so ``finally`` blocks run).

    A C extension may swallow the KeyboardInterrupt and raise something else in its place
    (numpy turns it into a TypeError inside a comparison); the flag keeps the cause known.
    """
    global _interrupted
    _interrupted = True
    raise KeyboardInterrupt


def _unraisable(hook_args) -> None:  # pragma: no cover - exercised in a subprocess
    """``sys.unraisablehook`` while a command runs: a KeyboardInterrupt Python had to drop is raised again.

    Our SIGINT handler raises wherever the main thread is, which may be a weakref callback
    (importlib's module-lock clean-up during an import) or a ``__del__``; CPython prints
    "Exception ignored" there and goes on, and the command would finish as if no Ctrl-C came.
    It is re-delivered by ``interrupt_main`` from a short-lived thread, once the main thread has
    left this hook: called here directly, the handler would run inside the hook (at the check
    after the call) and CPython would drop the interrupt once more, with a traceback.
    """
    if issubclass(hook_args.exc_type, KeyboardInterrupt):
        import _thread  # noqa: PLC0415
        import threading  # noqa: PLC0415

        t = threading.Timer(0.001, _thread.interrupt_main)
        t.daemon = True
        t.start()
        return
    sys.__unraisablehook__(hook_args)


def _solver_caught_interrupt(exc: BaseException) -> bool:
    """A solver that takes SIGINT itself (python-sat's solve) and reports it as its own error.

    Our handler never ran then; python-sat raises ``pysolvers.error("Caught keyboard interrupt")``.
    (z3 would swallow it; its callers turn z3's handler off with ``ctrl_c=False``.)
    """
    return "keyboard interrupt" in str(exc).lower()


def _set_sigint(handler) -> None:
    try:
        signal.signal(signal.SIGINT, handler)
    except (ValueError, OSError):  # not the main thread, or no signals here
        return
    if hasattr(signal, "pthread_sigmask"):
        # a parent may start nogo with SIGINT blocked so that no Ctrl-C falls in the interpreter's
        # own start-up; once our handler is in place, a held interrupt is delivered to it
        signal.pthread_sigmask(signal.SIG_UNBLOCK, {signal.SIGINT})


def _leave_now(code: int) -> None:  # pragma: no cover - exercised in a subprocess
    """End the program with *code* (130 if an interrupt came at any moment), skipping CPython's own exit.

    CPython's exit has windows where a SIGINT is lost (after the last bytecode, before the
    handlers are reset: status 0) or kills the process (after: status -2, no message).  Here the
    exit hooks run under the quiet handler, the streams are flushed, then SIGINT is blocked and
    a pending one still counts.
    """
    import atexit  # noqa: PLC0415

    atexit._run_exitfuncs()  # what CPython's exit would run first (Dask, process pools)
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except (OSError, ValueError):
            pass
    if hasattr(signal, "pthread_sigmask"):
        signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGINT})
        if signal.SIGINT in signal.sigpending():
            _quiet_exit()
    os._exit(code)


def _started_as_program() -> bool:
    arg0 = os.path.basename(sys.argv[0] if sys.argv else "")
    return arg0 in ("nogo", "nogo.exe", "nogo-script.py") or (
        arg0 == "__main__.py" and os.path.basename(os.path.dirname(sys.argv[0])) == "nogo")


if _started_as_program():
    # the first half second goes to imports; an interrupt there must not print a traceback
    _set_sigint(_quiet_exit)

import argparse  # noqa: E402
import importlib  # noqa: E402
import pkgutil  # noqa: E402

from .errors import InputError  # noqa: E402


def version() -> str:
    """nogo's version: from the source tree's pyproject.toml when run from one, else the installed metadata."""
    here = os.path.dirname(os.path.abspath(__file__))
    pyproject = os.path.join(os.path.dirname(here), "pyproject.toml")
    try:
        with open(pyproject, encoding="utf-8") as fh:
            text = fh.read()
        if 'name = "nogo"' in text:
            for line in text.splitlines():
                if line.startswith("version") and "=" in line:
                    return line.split("=", 1)[1].strip().strip('"\'')
    except OSError:
        pass
    try:
        from importlib.metadata import PackageNotFoundError, version as _meta  # noqa: PLC0415
        return _meta("nogo")
    except (ImportError, PackageNotFoundError):  # pragma: no cover
        return "unknown"


def build_parser(command: str | None = None) -> argparse.ArgumentParser:
    """The parser of every command; with *command*, only that command's module when one is named after it.

    ``nogo check ...`` then loads ``nogo.commands.check`` alone (start-up time); ``nogo --help``, a
    misspelt command, or a command registered by a module of another name (``proof-search``) loads all.
    Each module ``nogo/commands/NAME.py`` registers at least the command NAME.
    """
    from . import commands

    parser = argparse.ArgumentParser(
        prog="nogo",
        description="Decide, derive and check no-go theorems from declared scenarios and assumptions.")
    parser.add_argument("--version", action="version", version=f"nogo {version()}",
                        help="print nogo's version and stop")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    names = sorted(m.name for m in pkgutil.iter_modules(commands.__path__) if not m.name.startswith("_"))
    if command in names:
        names = [command]
    for name in names:
        importlib.import_module(f"{commands.__name__}.{name}").register(sub)
    return parser


def main(argv: list[str] | None = None) -> int:
    program = _started_as_program() and argv is None
    code = _main(argv, program)
    if program:
        if _interrupted and code != 130:  # the command went on after a Ctrl-C someone swallowed
            print("nogo: interrupted", file=sys.stderr)
            code = 130
        _leave_now(code)
    return code


def _main(argv: list[str] | None, program: bool) -> int:
    try:
        args_list = sys.argv[1:] if argv is None else list(argv)
        if args_list == ["--version"]:  # answer without importing the commands
            print(f"nogo {version()}")
            return 0
        parser = build_parser(args_list[0] if args_list else None)
        args = parser.parse_args(args_list)
        if not getattr(args, "run", None):
            parser.print_help()
            return 2
        if program:
            sys.unraisablehook = _unraisable
            _set_sigint(_raise_interrupt)
        try:
            return int(args.run(args) or 0)
        finally:
            if program:
                _set_sigint(_quiet_exit)
                sys.unraisablehook = sys.__unraisablehook__
    except InputError as exc:
        print(f"nogo: error: {exc}", file=sys.stderr)
        return 2
    except BrokenPipeError:
        # the reader went away (e.g. `nogo check ... | head`): not an error of ours; stay quiet
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return 2
    except KeyboardInterrupt:
        if program:
            _set_sigint(_quiet_exit)  # a second Ctrl-C while we stop is just as quiet
        print("nogo: interrupted", file=sys.stderr)
        return 130
    except RecursionError:
        print("nogo: error: the input is nested too deeply to process", file=sys.stderr)
        return 2
    except MemoryError:
        print("nogo: error: out of memory; the model is too large for this machine "
              "(see the size options of the command)", file=sys.stderr)
        return 2
    except Exception as exc:  # noqa: BLE001 - a user sees one line, developers set NOGO_DEBUG
        if _interrupted or _solver_caught_interrupt(exc):  # a library replaced the interrupt with its own error
            print("nogo: interrupted", file=sys.stderr)
            return 130
        if os.environ.get("NOGO_DEBUG"):
            raise
        print(f"nogo: internal error: {type(exc).__name__}: {exc} (set NOGO_DEBUG=1 for details)", file=sys.stderr)
        return 2


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
