"""The ``gapwake`` command line: a thin layer over the Python API."""

from __future__ import annotations

import argparse
import sys

from ._version import __version__


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="gapwake",
        description="Time-domain (Yee grid) simulation of moving charges and dipoles beside "
                    "dispersive, lossy dielectrics: Cherenkov and Doppler-branch emission, drag "
                    "and energy balance.")
    p.add_argument("--version", action="version", version=f"gapwake {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    d = sub.add_parser("demo", help="run a one-minute demonstration and write a figure",
                       description="A current pulse above a lossy Lorentz half-space: prints the "
                                   "energy ledger and writes a snapshot figure.")
    d.add_argument("-o", "--outdir", default="gapwake-demo", help="folder for the figure")
    d.add_argument("--quiet", action="store_true", help="no progress line")
    return p


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command == "demo":
        from .demo import run_demo

        run_demo(args.outdir, progress=False if args.quiet else None)
        return 0
    parser.print_help()
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
