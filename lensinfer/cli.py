"""The ``lensinfer`` command line.

Sub-commands are added as the capabilities behind them land; heavy imports
(numpyro, arviz) happen inside the sub-commands, never on the ``--help`` /
``--version`` path.
"""

from __future__ import annotations

import argparse
import sys

from lensinfer._version import __version__

__all__ = ["build_parser", "main"]

_DESCRIPTION = """\
lensinfer: stars versus dark matter in galaxy-scale strong gravitational lenses.

From an Einstein radius, the lens galaxy's light profile, its SED stellar
mass and redshifts (and, when measured, a velocity dispersion), lensinfer
infers the stellar mass-to-light ratio (the IMF), the dark-matter halo's
mass and concentration and the halo's response to the galaxy.
"""


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``lensinfer`` command."""
    parser = argparse.ArgumentParser(
        prog="lensinfer",
        description=_DESCRIPTION,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"lensinfer {__version__}")
    parser.add_subparsers(dest="command", title="commands", metavar="COMMAND")
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run the command line; returns the exit status (0 success, 2 bad input)."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return 0
    return 0  # pragma: no cover - every sub-command returns from its own handler


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
