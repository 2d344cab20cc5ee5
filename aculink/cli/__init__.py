"""The ``aculink`` command: a thin layer that parses options, calls the library and prints.

Each subcommand lives in its own module here with two functions: ``register(subparsers)``
adds its parser and ``run(args) -> int`` does the work. Modules import the heavy library
parts inside ``run`` so that ``aculink --help`` stays instant.
"""

from __future__ import annotations

import argparse
import importlib

from aculink.cli._common import fail, handle_errors

#: Subcommands in pipeline order; each names a module of this package.
COMMANDS = ("site", "rays", "arrivals", "loss", "channel", "link", "plan", "sweep", "demo")


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
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
    return parser


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "command", None):
        parser.print_help()
        return 2
    return handle_errors(args.func, args)


__all__ = ["main", "build_parser", "fail"]
