"""The single ``hearnav`` command and its subcommands."""

from hearnav.cli.main import main

__all__ = ["main"]
