"""The API's one request format: JSON, with decimal numbers kept as written.

A reported statistic of 2.10 stands for every value that rounds to 2.10, and the p-value check
uses that precision (see ledger.results.checks). Floats would turn 2.10 into 2.1, so decimal
numbers are parsed as ``Decimal`` and reach the forms with the digits the client sent.
"""

from __future__ import annotations

import json
from decimal import Decimal
from typing import Any

from django.conf import settings
from rest_framework.exceptions import ParseError
from rest_framework.parsers import JSONParser

# A result body is three levels deep; anything far deeper is a mistake or an attack on the parser.
MAX_DEPTH = 16


class ExactNumberJSONParser(JSONParser):
    def parse(self, stream, media_type=None, parser_context=None) -> Any:
        encoding = (parser_context or {}).get("encoding", settings.DEFAULT_CHARSET)
        limit = settings.DATA_UPLOAD_MAX_MEMORY_SIZE
        raw = stream.read() if limit is None else stream.read(limit + 1)
        if limit is not None and len(raw) > limit:
            raise ParseError(f"The body is larger than {limit} bytes; send one study's results per request.")
        try:
            data = json.loads(raw.decode(encoding), parse_float=Decimal, parse_constant=_refuse_constant)
        except (ValueError, UnicodeDecodeError, RecursionError) as error:
            raise ParseError(f"The body is not valid JSON ({error}); send a JSON object.") from None
        if _depth(data) > MAX_DEPTH:
            raise ParseError(f"The body nests deeper than {MAX_DEPTH} levels; a result body needs three.")
        return data


def _refuse_constant(name: str):
    raise ValueError(f"{name} is not a number JSON allows; send a finite number or null")


def _depth(value: Any) -> int:
    deepest, stack = 0, [(value, 1)]
    while stack:
        item, level = stack.pop()
        if isinstance(item, dict | list):
            deepest = max(deepest, level)
            children = item.values() if isinstance(item, dict) else item
            stack.extend((child, level + 1) for child in children)
    return deepest
