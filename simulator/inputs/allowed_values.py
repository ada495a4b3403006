"""What a field of the scenario schema allows, in words, made from the schema itself.

A message about a value of the wrong type or out of range says what values are allowed; it is made
from the field's type and constraints (:func:`_allowed`), so the schema stays the one place that
says it.
"""

from __future__ import annotations

import types
import typing
from datetime import date
from typing import Annotated, Any, Literal

from pydantic import BaseModel


def _submodel(annotation: Any) -> type[BaseModel] | None:
    """The model an annotation holds: the model itself, X | None, list[X] or dict[str, X]."""
    for member in (annotation, *typing.get_args(annotation)):
        if isinstance(member, type) and issubclass(member, BaseModel):
            return member
    return None


def _allowed(field: Any) -> str | None:
    """What values a schema field allows, in words, from its type and constraints (or its
    ``description``, for fields whose rule is more than a type and a range)."""
    if field.description:
        return field.description
    return _describe(field.annotation, field.metadata)


def _describe(annotation: Any, metadata: list) -> str | None:
    origin = typing.get_origin(annotation)
    if origin is Annotated:
        base, *extras = typing.get_args(annotation)
        said = next((extra.description for extra in extras if getattr(extra, "description", None)), None)
        if said:
            return said
        inner = [m for extra in extras for m in getattr(extra, "metadata", [extra])]
        return _describe(base, [*metadata, *inner])
    if origin in (typing.Union, types.UnionType):
        parts = [_describe(member, metadata) for member in typing.get_args(annotation) if member is not type(None)]
        return " or ".join(p for p in parts if p) or None
    if origin is Literal:
        values = [f'"{v}"' for v in typing.get_args(annotation)]
        return values[0] if len(values) == 1 else "one of " + ", ".join(values)
    if annotation is bool:
        return "true or false"
    if annotation is date:
        return "a date written YYYY-MM-DD"
    if annotation is str:
        longest = next((m.max_length for m in metadata if getattr(m, "max_length", None)), None)
        return "text" + (f" of at most {longest:,} characters" if longest else "")
    if annotation in (int, float):
        what = "a whole number" if annotation is int else "a number"
        bound = {k: getattr(m, k) for m in metadata for k in ("ge", "gt", "le", "lt") if getattr(m, k, None) is not None}
        low = (f"from {_number(bound['ge'])}" if "ge" in bound else
               f"above {_number(bound['gt'])}" if "gt" in bound else "")
        high = (f"to {_number(bound['le'])}" if "le" in bound else
                f"below {_number(bound['lt'])}" if "lt" in bound else "")
        if low and high:
            return f"{what} {low} {high}" if low.startswith("from") else f"{what} {low}, at most {high[3:]}"
        return " ".join(part for part in (what, low or ("up " + high if high else "")) if part)
    if origin in (tuple, list):
        item = _describe(typing.get_args(annotation)[0], [])
        longest = next((m.max_length for m in metadata if getattr(m, "max_length", None)), None)
        return ("a list" + (f" of at most {longest:,} entries" if longest else "")
                + (f", each {item}" if item else ""))
    return None


def _number(value: float) -> str:
    """A limit as a person writes it: 366, 0.5, -1e12."""
    if value == int(value) and abs(value) < 1e10:
        return f"{int(value):,}"
    if abs(value) >= 1e6:
        mantissa, exponent = f"{value:.3g}".split("e")
        return f"{mantissa}e{int(exponent)}"
    return f"{value:g}"
