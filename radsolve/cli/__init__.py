"""The command line: an adapter over the API (every rule lives in the API)."""

from radsolve.cli.app import app, main

__all__ = ["app", "main"]
