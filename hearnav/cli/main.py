"""Entry point: parse the command line, dispatch, and turn every error into one line.

Exit status: 0 done, 1 done with failures (reported), 2 bad input or an operating-system error, 3 a bug in
hearnav (an exception it did not expect), 130 interrupted. ``HEARNAV_DEBUG=1`` adds the traceback.
"""

from __future__ import annotations

import argparse
import errno
import os
import sys
import traceback

from hearnav import __version__
from hearnav.cli import bench_cmd, demo_cmd, plot_cmd, report_cmd, scenes_cmd, train_cmd
from hearnav.errors import HearnavError, exception_line, shown_path

#: What failed, by the OSError subclass (the rest: "cannot use").
_WHAT = {FileNotFoundError: "not found:", PermissionError: "no permission for", IsADirectoryError: "a folder:",
         NotADirectoryError: "not a folder on the way to", FileExistsError: "already exists:"}


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
    train_cmd.register(sub)
    plot_cmd.register(sub)
    report_cmd.register(sub)
    demo_cmd.register(sub)
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
    except OSError as exc:
        _traceback_if_debugging()
        print(f"hearnav: error: {os_error_line(exc)}", file=sys.stderr)
        return 2
    except Exception as exc:  # the last resort: a bug, reported in one line (HEARNAV_DEBUG=1 adds the traceback)
        _traceback_if_debugging()
        print(f"hearnav: internal error: {exception_line(exc)} (this is a bug; rerun with "
              f"HEARNAV_DEBUG=1 to see the traceback and please report it)", file=sys.stderr)
        return 3


def _traceback_if_debugging() -> None:
    if os.environ.get("HEARNAV_DEBUG", "") not in ("", "0"):
        traceback.print_exc(file=sys.stderr)


def os_error_line(exc: OSError) -> str:
    """One line for an operating-system error: what failed, on which path, the system's reason and errno."""
    code = f"errno {exc.errno} {errno.errorcode.get(exc.errno, '?')}" if exc.errno is not None else "no errno"
    reason = exc.strerror or exception_line(exc)
    hint = "check the path, its permissions and the free space"
    if exc.filename is None:
        return f"operating-system error: {reason} ({code}; {hint})"
    where = shown_path(exc.filename) + (f" -> {shown_path(exc.filename2)}" if exc.filename2 is not None else "")
    what = next((w for cls, w in _WHAT.items() if isinstance(exc, cls)), "cannot use")
    return f"{what} {where}: {reason} ({code}; {hint})"


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
