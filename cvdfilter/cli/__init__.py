"""The command line: a thin layer over the public API (see cvdfilter.cli.app)."""

__all__ = ["main"]


def main() -> None:
    from .app import run

    run()
