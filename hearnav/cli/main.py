"""Entry point: parse the command line, dispatch, and turn every hearnav error into one line."""

from __future__ import annotations

import argparse
import sys

from hearnav import __version__
from hearnav.cli import bench_cmd, scenes_cmd
from hearnav.errors import HearnavError


def build_parser() -> argparse.ArgumentParser:
    """The ``hearnav`` argument parser with every subcommand."""
    parser = argparse.ArgumentParser(
        prog="hearnav",
        description="Binaural listening worlds from floorplans, and a benchmark for agents that move to help "
                    "a separator. Results come from simulation only.")
    parser.add_argument("--version", action="version", version=f"hearnav {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)
    scenes_cmd.register(sub)
    bench_cmd.register(sub)
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run the command line; returns the exit status."""
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.run(args) or 0)
    except HearnavError as exc:
        print(f"hearnav: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("hearnav: interrupted; finished results on disk are kept", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
