"""Any document's record as JSON.

A document's ``record()`` is plain data (``derive.documents.sheet.to_json_value``
turns sympy objects into strings with sympy's ``str``, matrices into lists of
rows); this renderer only writes it, with sorted keys so the same document
gives the same bytes.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any

from ..documents.sheet import SCHEMA_VERSION, solution_record, to_json_value
from .base import Renderer, as_document

__all__ = ["JsonRenderer", "solution_record", "to_json_value", "SCHEMA_VERSION"]


@dataclass(frozen=True)
class JsonRenderer(Renderer):
    """Any document as sorted, indented JSON (``fragment`` has no effect).

    >>> JsonRenderer().suffix
    '.json'
    """

    name: str = "json"
    suffix: str = ".json"
    indent: int = 2

    def render(self, document: Any, *, fragment: bool = False) -> str:
        """JSON text of the document's record, keys sorted, ending in a newline."""
        return json.dumps(
            as_document(document).record(), sort_keys=True, indent=self.indent, ensure_ascii=False, allow_nan=False
        ) + "\n"
