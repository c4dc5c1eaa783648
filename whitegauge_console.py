"""The ``whitegauge`` console command's entry point.

A tiny top-level module (it imports nothing heavy itself), so that Ctrl-C while numpy,
scipy and the engine are still being imported ends the command like Ctrl-C at any later
moment: exit code 130 and one line, no traceback. Everything else is
:func:`holonomy.cli.main`.
"""

import sys

__all__ = ["main"]


def main() -> int:
    """Run ``holonomy.cli.main`` on ``sys.argv``; exit 130 on Ctrl-C during start-up."""
    try:
        from holonomy.cli import main as cli_main

        return cli_main()
    except KeyboardInterrupt:  # before (or outside) the command's own handler
        print("whitegauge: interrupted while starting; nothing was computed or written",
              file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
