"""Entry point of the `tunnelstack` command.

Each subcommand lives in its own module `cli/cmd_<name>.py` that defines

    NAME: str                      the subcommand name
    HELP: str                      one line for `tunnelstack --help`
    def add_arguments(parser)      its options
    def run(args) -> int           does the work, returns the exit code

Exit codes: 0 ok, 1 computation failed, 2 bad input. Errors of the library
(CaseError, ConvergenceError, ComputationError) are turned into one line on
stderr here, never a traceback.
"""
from __future__ import annotations

import argparse
import importlib
import os
import sys

# Order shown in --help: set-up and inspection first, then the physics, then studies.
COMMAND_MODULES = (
    "cmd_demo",
    "cmd_materials",
    "cmd_check",
    "cmd_validate",
    "cmd_bands",
    "cmd_cv",
    "cmd_breakdown",
    "cmd_cell",
    "cmd_study",
    "cmd_show",
    "cmd_plot",
    "cmd_export",
)

EXIT_OK, EXIT_FAILED, EXIT_BAD_INPUT = 0, 1, 2


def _load_commands():
    commands = []
    for name in COMMAND_MODULES:
        try:
            module = importlib.import_module(f"cli.{name}")
        except ModuleNotFoundError as err:
            if err.name == f"cli.{name}":
                continue  # command not part of this build
            raise
        commands.append(module)
    return commands


class _Parser(argparse.ArgumentParser):
    """argparse with its usage errors on one line (exit code 2), like every other bad input."""

    def error(self, message):
        self.exit(EXIT_BAD_INPUT, f"error: {self.prog}: {message} (`{self.prog} --help` lists the options)\n")


def _os_error_line(err: OSError) -> str:
    """One line for a file that could not be read or written: the path and the reason."""
    from pathlib import Path

    reason = err.strerror or str(err)
    if not err.filename:
        return str(err)
    path = Path(str(err.filename))
    if path.name.startswith(".") and path.name.endswith(".tmp"):  # the atomic writer's temporary file
        return f"cannot write into the directory {path.parent} ({reason})"
    return f"{path}: {reason}"


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="tunnelstack",
        description=(
            "Gate-stack electrostatics, channel quantization and exact multilayer "
            "tunneling for charge-trap memory cells. Simulated retention and endurance "
            "are estimates: qualification follows the applicable standards and lab "
            "practice, not this tool."
        ),
    )
    from solver import __version__

    parser.add_argument("--version", action="version", version=f"tunnelstack {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for module in _load_commands():
        p = sub.add_parser(module.NAME, help=module.HELP, description=module.HELP)
        module.add_arguments(p)
        p.set_defaults(_run=module.run)
    return parser


class _BadUsage(Exception):
    pass


def main(argv=None) -> int:
    os.environ.setdefault("MPLBACKEND", "Agg")
    parser = build_parser()
    args = parser.parse_args(argv)
    if getattr(args, "_run", None) is None:
        parser.print_help()
        return EXIT_BAD_INPUT
    from solver.errors import CaseError, ComputationError

    try:
        return int(args._run(args) or 0)
    except CaseError as err:
        print(f"error: {err}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except ComputationError as err:
        print(f"computation failed: {err}", file=sys.stderr)
        return EXIT_FAILED
    except BrokenPipeError:  # the reader stopped early (`| head`): not an error of ours
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return EXIT_OK
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    except OSError as err:
        print(f"error: {_os_error_line(err)}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except ValueError as err:  # a library function refusing an argument the command passed on
        if os.environ.get("TUNNELSTACK_TRACEBACK"):
            raise
        print(f"error: {err}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except Exception as err:  # a defect, not bad input: say so in one line, traceback on request
        if os.environ.get("TUNNELSTACK_TRACEBACK"):
            raise
        print(f"internal error ({type(err).__name__}: {err}); please report it with the case file. "
              "Set TUNNELSTACK_TRACEBACK=1 to see the traceback.", file=sys.stderr)
        return EXIT_FAILED


if __name__ == "__main__":
    sys.exit(main())
