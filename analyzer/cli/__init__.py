"""The command line: ``app`` parses options, the command functions call the stages."""

from ._app import app, main

__all__ = ["app", "main"]
