"""The ``aculink`` command: a thin layer that parses options, calls the library and prints.

Each subcommand lives in its own module here with two functions: ``register(subparsers)``
adds its parser and ``run(args) -> int`` does the work. Modules import the heavy library
parts inside ``run`` so that ``aculink --help`` stays instant.
"""

from __future__ import annotations

import importlib
import sys

from aculink.cli._common import (EXIT_BROKEN_PIPE, Parser, UsageError, check_options, check_output_option,
                                 check_plot_path, fail, handle_errors, option_strings, quiet_stdout)

#: Subcommands in pipeline order; each names a module of this package.
COMMANDS = ("site", "rays", "arrivals", "loss", "channel", "link", "plan", "sweep", "redraw", "demo")


def build_parser() -> Parser:
    parser = Parser(
        prog="aculink",
        description="Which data rate will an underwater acoustic link sustain at this site? "
        "Planning estimates only: sound in water can harm marine life and people; follow local "
        "regulations and permits for acoustic emissions.",
    )
    from aculink import __version__

    parser.add_argument("--version", action="version", version=f"aculink {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name in COMMANDS:
        try:
            module = importlib.import_module(f"aculink.cli.{name}")
        except ModuleNotFoundError as exc:  # a command still being built
            if exc.name != f"aculink.cli.{name}":
                raise
            continue
        module.register(sub)
        command = sub.choices[name]
        command.set_defaults(_options=option_strings(command))
    return parser


def _checked(args):
    """Refuse bad numbers and unusable output files before the command does any work."""
    check_options(args)
    check_plot_path(args)
    check_output_option(args, "csv", ".csv")
    return args.func(args)


def _main(argv) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except UsageError as exc:
        return fail(str(exc))
    except SystemExit as exc:  # --help and --version
        return 0 if exc.code is None else int(exc.code)
    if not getattr(args, "command", None):
        parser.print_help()
        return 2
    code = handle_errors(_checked, args)
    sys.stdout.flush()  # inside the guard below: a reader that went away is not an error
    return code


def main(argv=None) -> int:
    """Run the ``aculink`` command line; return the exit code (0 done, 2 bad input)."""
    try:
        return _main(argv)
    except BrokenPipeError:
        quiet_stdout()
        return EXIT_BROKEN_PIPE


__all__ = ["main", "build_parser", "fail"]
