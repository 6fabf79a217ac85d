"""The command line: `embedcheck COMMAND ...`."""
from .app import main

__all__ = ["main"]
