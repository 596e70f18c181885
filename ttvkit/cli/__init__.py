"""The ``ttvkit`` command: argparse only; strings become options objects and library calls."""

from ttvkit.cli.main import build_parser, main

__all__ = ["main", "build_parser"]
