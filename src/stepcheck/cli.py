"""The command line (SPEC §10)."""

from __future__ import annotations


def main() -> None:
    raise NotImplementedError  # CLI helper
