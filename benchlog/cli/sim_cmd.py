"""Subcommands: (being built)."""

from __future__ import annotations


def register(sub) -> None:
    """Add this module's subcommands to the `benchlog` parser."""
