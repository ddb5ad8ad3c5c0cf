"""The context a rule reads: the loaded design, lazily computed analyses, its own parameters."""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from typing import Any, Mapping

from afecheck.model.loaded import LoadedDesign


@dataclass
class Context:
    """Per-design context shared by all rules; each analysis is computed once, on first use."""

    loaded: LoadedDesign
    params: Mapping[str, Any] = field(default_factory=dict)

    @cached_property
    def analysis(self):
        from afecheck.analysis import analyse

        return analyse(self.loaded)
