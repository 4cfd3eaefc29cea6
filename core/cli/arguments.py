"""Types of the command line's options: each turns the text typed into a value,
or refuses it with a message that says what was expected (argparse prints it as
one ``error:`` line)."""
from __future__ import annotations

import argparse

__all__ = ["whole_number", "seed_number", "at_least_one", "positive_number", "port_number"]


def whole_number(minimum: int):
    """An argparse type: a whole number no smaller than ``minimum``."""

    def parse(text: str) -> int:
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(
                f"expected a whole number, found '{text}'") from None
        if value < minimum:
            raise argparse.ArgumentTypeError(
                f"expected a whole number, {minimum} or more, found {value}")
        return value

    return parse


seed_number = whole_number(0)
at_least_one = whole_number(1)


def positive_number(text: str) -> float:
    """An argparse type: a number above 0."""
    try:
        value = float(text)
    except ValueError:
        value = float("nan")
    if not value > 0 or value == float("inf"):
        raise argparse.ArgumentTypeError(f"expected a number above 0, found '{text}'")
    return value


def port_number(text: str) -> int:
    """An argparse type: a local port a user may open (1024 to 65535)."""
    try:
        port = int(text)
    except ValueError:
        port = -1
    if not 1024 <= port <= 65535:
        raise argparse.ArgumentTypeError(
            f"expected a port number from 1024 to 65535, found '{text}'")
    return port
