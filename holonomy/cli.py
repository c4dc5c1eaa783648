"""The ``whitegauge`` command line."""

from __future__ import annotations

import argparse
import sys

from holonomy import __version__


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="whitegauge",
        description="Stochastic holonomy experiments in two-dimensional gauge theory.",
    )
    parser.add_argument("--version", action="version", version=f"whitegauge {__version__}")
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    parser.parse_args(argv)
    parser.print_help()
    return 0


if __name__ == "__main__":
    sys.exit(main())
