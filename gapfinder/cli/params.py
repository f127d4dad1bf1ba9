"""Option types shared by the command groups."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any, TypeVar

import click

__all__ = ["F", "FiniteFloat"]

F = TypeVar("F", bound=Callable[..., Any])


class FiniteFloat(click.FloatRange):
    """A float option that refuses nan and ±inf as well as values out of its range."""

    name = "number"

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None) -> Any:
        import math

        number = super().convert(value, param, ctx)
        if not math.isfinite(number):
            self.fail(f"{value!r} is not a finite number", param, ctx)
        return number
