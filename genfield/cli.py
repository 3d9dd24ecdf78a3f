"""The ``genfield`` command line: one verb a module under ``genfield/commands/``.

Only the chosen verb's module is imported, and those modules import their heavy machinery
(torch, trimesh) inside ``run``, so ``genfield --help`` and ``genfield check`` stay instant.
Every GenfieldError becomes one line ``genfield: error: ...`` and exit code 2; any other
exception is reported as an internal error in one line (exit 1), with the traceback only
under ``--debug``.
"""

from __future__ import annotations

import argparse
import importlib
import logging
import sys

from genfield import __version__
from genfield.errors import EXIT_BAD_INPUT, GenfieldError, UsageError

# verb -> one-line help; the module genfield.commands.<verb> does the work.
VERBS: dict[str, str] = {
    "train": "learn a generative field over training sources (TOML config)",
    "render": "render a recipe into a labelled dataset folder",
    "check": "parse and check a recipe, summarise it, show concrete scenes",
    "mesh": "export the mesh of a code, or of a whole scene of a recipe",
    "sweep": "render a strip or grid varying one or two parameters",
    "preview": "contact sheet of a recipe's first images with label overlays",
    "inspect": "show what a model file holds (codes, sources, metrics)",
    "fit": "fit a code pair for a new mesh with the network frozen",
    "merge": "join dataset shards into one dataset",
    "bench": "measure speed and quality figures in one run",
    "demo": "train the quick preset and render a demo dataset, end to end",
}


class _Parser(argparse.ArgumentParser):
    """argparse that raises a UsageError (one line, exit 2) instead of printing usage."""

    def error(self, message: str) -> None:  # type: ignore[override]
        raise UsageError(message, hint=f"see '{self.prog} --help'")


def _top_parser() -> _Parser:
    p = _Parser(
        prog="genfield",
        description="Learn a generative feature field over objects on a CPU and render "
        "labelled synthetic datasets from scene recipes.",
        epilog="Run 'genfield VERB --help' for the options of one verb.",
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("--version", action="version", version=f"genfield {__version__}")
    p.add_argument("--debug", action="store_true", help="show tracebacks of errors")
    sub = p.add_subparsers(dest="verb", metavar="VERB", title="verbs")
    for verb, text in VERBS.items():
        sub.add_parser(verb, help=text, add_help=False)
    return p


def _verb_parser(verb: str) -> tuple[_Parser, object]:
    module = importlib.import_module(f"genfield.commands.{verb}")
    p = _Parser(prog=f"genfield {verb}", description=module.__doc__)
    p.add_argument("--debug", action="store_true", help="show tracebacks of errors")
    module.add_arguments(p)
    return p, module


def _split_verb(argv: list[str]) -> tuple[list[str], str | None, list[str]]:
    """Options before the verb, the verb, and what follows it."""
    for i, arg in enumerate(argv):
        if not arg.startswith("-"):
            return argv[:i], arg, argv[i + 1 :]
    return argv, None, []


def main(argv: list[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    debug = "--debug" in argv
    logging.basicConfig(level=logging.INFO, format="genfield: %(message)s", stream=sys.stderr)
    try:
        head, verb, rest = _split_verb(argv)
        top = _top_parser()
        if verb is None:
            top.parse_args(head)  # handles --help / --version / bad options
            top.print_help()
            return EXIT_BAD_INPUT
        if verb not in VERBS:
            from difflib import get_close_matches

            near = get_close_matches(verb, VERBS, n=1)
            raise UsageError(
                f"unknown verb {verb!r}",
                hint=f"did you mean {near[0]!r}?" if near else "see 'genfield --help'",
            )
        top.parse_args(head)
        parser, module = _verb_parser(verb)
        args = parser.parse_args(rest)
        args.debug = debug
        return int(module.run(args) or 0)
    except GenfieldError as err:
        if debug:
            raise
        print(f"genfield: error: {err.one_line()}", file=sys.stderr)
        if err.context:
            print(err.context, file=sys.stderr)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        print("genfield: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:  # `genfield ... | head`: the reader left; not an error of ours
        import os

        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0
    except SystemExit as stop:  # argparse --help / --version
        return int(stop.code or 0) if isinstance(stop.code, int) else 0
    except Exception as err:  # noqa: BLE001 (the last line of defence: one useful line)
        if debug:
            raise
        text = " ".join(str(err).split()) or "(no message)"
        print(
            f"genfield: internal error: {type(err).__name__}: {text} "
            "(this is a bug in genfield; rerun with --debug for the traceback)",
            file=sys.stderr,
        )
        return 1


def run() -> None:
    """Console-script entry point."""
    sys.exit(main())
