"""The ``transit-risk`` command line: one parser for every command, one error/exit/signal rule."""
from uq.cli.main import main

__all__ = ["main"]
