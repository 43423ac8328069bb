"""The ``gapwake`` command (sub-commands arrive with the scenario issue)."""

from __future__ import annotations

import argparse
import sys

from ._version import __version__


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="gapwake",
        description="Time-domain simulation of moving charges and dipoles beside dispersive, "
                    "lossy dielectrics.")
    p.add_argument("--version", action="version", version=f"gapwake {__version__}")
    return p


def main(argv=None) -> int:
    parser = build_parser()
    parser.parse_args(argv)
    parser.print_help()
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
