"""The report's page machinery: the jinja environment, JSON safe inside a script element, the
Content-Security-Policy of the page's own scripts, and figures embedded as ``data:`` PNG images.

Nothing here knows what the page says: :mod:`report` gives it the context, :mod:`report_sections`
builds the context of each section.
"""

from __future__ import annotations

import base64
import hashlib
import json
import math
import re
from collections.abc import Mapping
from typing import Any

import jinja2
import numpy as np

__all__ = ["script_json", "PHONE_MEDIA"]

_ENV = jinja2.Environment(loader=jinja2.PackageLoader("simulator.account", "templates"),
                          autoescape=jinja2.select_autoescape(["html", "j2"]),
                          undefined=jinja2.StrictUndefined, trim_blocks=True, lstrip_blocks=True)


# characters that could end or bend a <script> element's content, or a JavaScript string, in JSON
_SCRIPT_UNSAFE = {"<": "\\u003c", ">": "\\u003e", "&": "\\u0026", "\u2028": "\\u2028", "\u2029": "\\u2029"}


def script_json(value: Any) -> str:
    """``value`` as JSON that is safe inside a ``<script>`` element: ``<``, ``>``, ``&``, U+2028 and
    U+2029 written as ``\\u`` escapes, so that no string in it (a user's ``</script>`` or ``<!--``
    followed by ``<script``) can close the element or switch the HTML parser into its
    script-data-escaped state (WHATWG HTML, "Restrictions for contents of script elements"). JSON
    reads the escapes back as the same characters."""
    text = json.dumps(_plain(value), separators=(",", ":"))
    return re.sub("[<>&\u2028\u2029]", lambda m: _SCRIPT_UNSAFE[m.group()], text)


_CSP_PLACEHOLDER = "__gonogo_script_hashes__"
_INLINE_SCRIPT = re.compile(r"<script>(.*?)</script>", re.S)


def _with_content_policy(html: str) -> str:
    """The page with its Content-Security-Policy filled in: nothing from the network
    (``default-src 'none'``), the page's own inline scripts by their SHA-256 hashes, its inline
    style, and ``data:`` images (W3C, Content Security Policy Level 3, sections 6 and 8.3)."""
    hashes = " ".join("'sha256-" + base64.b64encode(hashlib.sha256(body.encode("utf-8")).digest()).decode("ascii") + "'"
                      for body in _INLINE_SCRIPT.findall(html))
    return html.replace(_CSP_PLACEHOLDER, hashes, 1)


def _plain(value: Any) -> Any:
    """numpy values as plain Python, NaN as None (JSON for the page's script)."""
    if isinstance(value, Mapping):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, list | tuple | np.ndarray):
        return [_plain(v) for v in value]
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def _png_size(png: bytes) -> tuple[int, int]:
    """Width and height in pixels, from the IHDR chunk (PNG specification, W3C/ISO 15948, 11.2.2)."""
    return int.from_bytes(png[16:20], "big"), int.from_bytes(png[20:24], "big")


def _data_uri(png: bytes) -> str:
    return "data:image/png;base64," + base64.b64encode(png).decode("ascii")


PHONE_MEDIA = "screen and (max-width: 600px)"  # where the page shows the figures' narrow layout
