"""The ``mdsim`` command line (also ``python -m mdsim``): one module per command.

:data:`COMMANDS` maps each command's name to its module; a command module
has a one-line ``HELP``, ``add_arguments(parser)`` and ``run(args) -> int``,
and may declare ``OPTION_FOR_SETTING`` ({library setting: option}) so that
a :class:`~mdsim.errors.SettingError` from the library names the option
that gave the setting.  Command modules parse, call the library and print;
their shared option types live in :mod:`mdsim.cli.options`.

Bad input (a :class:`StudyError` or a bad argument) prints one line
``mdsim: error: ...`` to stderr and exits with status 2; a simulation that
cannot go on prints one line and exits with 1.
"""
import argparse
import errno
import sys
import warnings

from mdsim.cli import (cmd_check, cmd_demo, cmd_inversion, cmd_report, cmd_run, cmd_sample,
                       cmd_status, cmd_table, cmd_task, cmd_virial)
from mdsim.errors import ConvergenceError, SettingError, SimulationError, StudyError

__all__ = ["PROG", "COMMANDS", "build_parser", "main"]

PROG = "mdsim"
EXIT_USAGE = 2
EXIT_FAILED = 1
EXIT_INTERRUPTED = 130

#: Command name -> its module, in the order of ``mdsim --help``.
COMMANDS = {
    "run": cmd_run,
    "task": cmd_task,
    "status": cmd_status,
    "report": cmd_report,
    "demo": cmd_demo,
    "virial": cmd_virial,
    "inversion": cmd_inversion,
    "sample": cmd_sample,
    "check": cmd_check,
    "table": cmd_table,
}


class _Parser(argparse.ArgumentParser):
    """An argument parser whose errors are one line and raise StudyError."""

    def error(self, message):
        raise StudyError(f"{message} (see '{self.prog} --help')")


def _version():
    from importlib.metadata import PackageNotFoundError, version
    try:
        return version("free-expansion")
    except PackageNotFoundError:
        return "unknown"


def build_parser():
    """The argument parser with every command of :data:`COMMANDS`."""
    parser = _Parser(prog=PROG, description="Free-expansion temperature change of a gas from its "
                     "pair potential, by simulation and virial theory.")
    parser.add_argument("--version", action="version", version=f"{PROG} {_version()}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name, module in COMMANDS.items():
        module.add_arguments(sub.add_parser(name, help=module.HELP, description=module.HELP))
    return parser


def _option_error(exc, command):
    """A SettingError as the option that gave the setting, when the command says which."""
    option = getattr(COMMANDS.get(command), "OPTION_FOR_SETTING", {}).get(exc.setting)
    return exc.for_option(option) if option else exc


def _one_line(exc):
    return " ".join(str(exc).split())


def _error(exc, status):
    print(f"{PROG}: error: {_one_line(exc)}", file=sys.stderr)
    return status


def _show_warning(message, category, filename, lineno, file=None, line=None):
    """A warning as one line 'mdsim: warning: ...' (no source path, no code line)."""
    print(f"{PROG}: warning: {_one_line(message)}", file=file or sys.stderr)


def main(argv=None):
    """Run the command line; returns the exit status (0 ok, 1 failed run, 2 bad input)."""
    with warnings.catch_warnings():  # restores the warning display on the way out
        warnings.showwarning = _show_warning
        return _main(argv)


def _main(argv):
    command = None
    try:
        args = build_parser().parse_args(argv)
        command = args.command
        if command is None:
            raise StudyError(f"give a command: {', '.join(COMMANDS)} (see '{PROG} --help')")
        return int(COMMANDS[command].run(args) or 0)
    except SettingError as exc:
        return _error(_option_error(exc, command), EXIT_USAGE)
    except StudyError as exc:
        return _error(exc, EXIT_USAGE)
    except (SimulationError, ConvergenceError) as exc:
        return _error(exc, EXIT_FAILED)
    except OSError as exc:
        if exc.errno not in (errno.ENOSPC, errno.EDQUOT, errno.EROFS, errno.EFBIG):
            raise
        # a full or read-only disk part way through: finished work is kept and resumes
        print(f"{PROG}: error: cannot write '{exc.filename or '?'}': {exc.strerror}; free space "
              "and run the same command again to resume", file=sys.stderr)
        return EXIT_FAILED
    except KeyboardInterrupt:
        print(f"{PROG}: interrupted; run the same command again to resume from the last "
              "checkpoint (when --out was given)", file=sys.stderr)
        return EXIT_INTERRUPTED
