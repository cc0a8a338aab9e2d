"""What the command modules share: option types, quantity options, renamed options, output.

Every parser here names the option in its message, so a bad value reads
``--workers = 0 must be at least 1`` whichever command it came to.
"""
import argparse
import contextlib
import json
import logging
import os
import sys

from mdsim.errors import StudyError

__all__ = ["positive_int", "nonnegative_int", "quantity", "quantity_pair", "add_renamed_option",
           "print_out", "print_json", "say", "verbose_logging"]


def _int_at_least(name, minimum):
    """argparse type: a whole number >= minimum, with a message naming the option."""
    def parse(text):
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{name} = {text!r} is not a whole number") from None
        if value < minimum:
            limit = "must be at least 1" if minimum == 1 else f"must be {minimum} or more"
            raise argparse.ArgumentTypeError(f"{name} = {value} {limit}")
        return value
    return parse


def positive_int(name):
    """argparse type of option ``name``: a whole number >= 1."""
    return _int_at_least(name, 1)


def nonnegative_int(name):
    """argparse type of option ``name``: a whole number >= 0."""
    return _int_at_least(name, 0)


def quantity(text, kind, option):
    """The SI magnitude of a quantity option (``"150 K"``), None when not given.

    Parameters
    ----------
    text : str or None
    kind : str
        A kind of :func:`mdsim.units.parse_quantity` ("temperature", "pressure",
        "molar_density", "molar_energy", ...).
    option : str
        The option, for the message (``"--density"``).
    """
    from mdsim.units import parse_quantity
    if text is None:
        return None
    return parse_quantity(text, kind, f"option {option}")


def add_state_options(parser):
    """--temperature and --pressure or --density, overriding the study's [initial]."""
    parser.add_argument("--temperature", help='initial temperature with unit, for example '
                        '"150 K" (overrides [initial] and a [sweep] of temperatures)')
    group = parser.add_mutually_exclusive_group()
    group.add_argument("--pressure", help='initial pressure with unit, for example "100 bar" '
                       "(overrides [initial] and a [sweep] of pressures or densities)")
    group.add_argument("--density", help='initial molar density with unit, for example '
                       '"500 mol/m^3" (overrides [initial] and a [sweep] of pressures or '
                       "densities)")


def state_overrides(args):
    """The keyword arguments of ``mdsim.study.with_initial_state`` from the options, or None."""
    out = {"temperature_K": quantity(args.temperature, "temperature", "--temperature"),
           "pressure_Pa": quantity(args.pressure, "pressure", "--pressure"),
           "density_mol_m3": quantity(args.density, "molar_density", "--density")}
    return out if any(v is not None for v in out.values()) else None


def quantity_pair(values, kind, option):
    """(LOW, HIGH) in SI of a two-value quantity option, None when not given."""
    if values is None:
        return None
    lo, hi = (quantity(v, kind, option) for v in values)
    if not hi >= lo:
        raise StudyError(f"option {option} = {values[0]!r} {values[1]!r}: give LOW then HIGH "
                         "with LOW <= HIGH")
    return (lo, hi)


class _Renamed(argparse.Action):
    """An option that was renamed: using it is an error naming the new spelling."""

    def __init__(self, option_strings, dest, new=None, **kwargs):
        self.new = new
        super().__init__(option_strings, dest, nargs="?", help=argparse.SUPPRESS, **kwargs)

    def __call__(self, parser, namespace, values, option_string=None):
        value = "VALUE" if values is None else values
        raise StudyError(f"option {option_string} is now called {self.new}: write "
                         f"{self.new} {value}")


def add_renamed_option(parser, old, new):
    """Accept ``old`` only to refuse it with one line naming ``new`` (hidden from --help)."""
    parser.add_argument(old, action=_Renamed, new=new, dest=f"renamed_{old.lstrip('-')}",
                        default=argparse.SUPPRESS)


def print_out(text):
    """Print text on stdout; a reader that closed the pipe (``| head``) ends the output quietly.

    The rest of the text is dropped: the reader asked for no more of it.
    """
    try:
        print(text, flush=True)
    except BrokenPipeError:
        # stdout is gone: point it at devnull so the interpreter's final flush cannot fail
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())


def print_json(data, default=None):
    """Print JSON on stdout, quietly cut short by a closed pipe (:func:`print_out`).

    ``default`` converts what JSON cannot hold, as in :func:`json.dumps`.
    """
    print_out(json.dumps(data, indent=2, default=default))


def say(text, quiet=False):
    """A message for the user on stderr, unless quiet."""
    if not quiet:
        print(text, file=sys.stderr)


def verbose_logging(verbose):
    """A ``with`` block that, with ``verbose``, shows the package's debug log on stderr."""
    if not verbose:
        return contextlib.nullcontext()
    from mdsim.pipeline.run_study import package_log_to
    handler = logging.StreamHandler(sys.stderr)
    handler.setFormatter(logging.Formatter("%(levelname)s %(name)s: %(message)s"))
    return package_log_to(handler, logging.DEBUG)
