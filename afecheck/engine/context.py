"""The context a rule reads: the loaded design, analyses computed once and shared, and the rule's own parameters."""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from afecheck.model.loaded import LoadedDesign

if TYPE_CHECKING:
    from afecheck.analysis.results import DesignAnalysis, StageResult
    from afecheck.engine.rule import RuleMeta


@dataclass
class Context:
    """Per-design context; ``for_rule`` gives each rule a view with its parameters over one shared cache.

    An analysis that fails is cached as its exception and re-raised to every rule that reads it, so it
    is attempted once and each rule that needed it can report "not evaluated".
    """

    loaded: LoadedDesign
    params: Mapping[str, Any] = field(default_factory=dict)
    rule: RuleMeta | None = None
    _cache: dict[str, Any] = field(default_factory=dict, repr=False)

    def memo(self, key: str, compute: Callable[[], Any]) -> Any:
        """Compute ``key`` once per design (exceptions included) and share it between rules."""
        if key not in self._cache:
            try:
                self._cache[key] = compute()
            except Exception as exc:  # noqa: BLE001 - cached and re-raised to each reader
                self._cache[key] = exc
        value = self._cache[key]
        if isinstance(value, BaseException):
            raise value
        return value

    def computed(self, key: str) -> Any:
        """The value ``key`` already holds, or None when it was never computed or failed (computes nothing)."""
        value = self._cache.get(key)
        return None if isinstance(value, BaseException) else value

    @property
    def analysis(self) -> DesignAnalysis:
        """The design analysis (stages, net signals), computed on first use."""
        from afecheck.analysis import analyse

        return self.memo("analysis", lambda: analyse(self.loaded))

    @property
    def stages(self) -> tuple[StageResult, ...]:
        """Every analysed op-amp stage, in the analysis's order."""
        return self.analysis.stages

    def for_rule(self, meta: RuleMeta, params: Mapping[str, Any] | None = None) -> Context:
        """A view for one rule: its metadata and parameters, the same shared analyses."""
        return Context(loaded=self.loaded, params=dict(params or {}), rule=meta, _cache=self._cache)

    def param(self, name: str) -> float:
        """The rule parameter ``name`` in SI: the configured value, else the rule's default."""
        if name in self.params:
            return float(self.params[name])
        if self.rule is None:
            raise KeyError(f"no rule bound to this context; cannot read parameter {name!r}")
        return float(self.rule.param(name).default)
