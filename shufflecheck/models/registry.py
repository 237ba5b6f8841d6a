"""The model registry: one entry per shuffle step, read by everything that lists models.

Every step module registers each of its steps once, at import, with :func:`register_model`:

.. code-block:: python

    register_model(
        ModelEntry(
            Riffle,                     # the step class: keyword, summary, parameters
            steps_word="riffles",       # "after k riffles"
            sources=(BAYER_DIACONIS,),  # published sources of its law
            curve=distance_curve,       # exact distance to uniform for k = 1..K (optional)
            curve_options=("hands",),
            spectrum=spectrum,          # eigenvalues of one step (optional)
            spectrum_options=("hands",),
            default_steps=lambda n: math.ceil(1.5 * math.log2(n)) + 5,
            exact="rising sequences: any k, n <= 2,000",
        )
    )

The procedure parser (step words and typed parameters), the ``mix`` and ``spectrum``
commands (their model choices), the report builders (step words, sources) and the model
table in docs/models.md all read these entries, so a new model is one module with one
entry. Step modules are found by listing this package: every module except the
infrastructure listed in :data:`_NOT_MODELS` is imported on first use.
"""

from __future__ import annotations

import dataclasses
import difflib
import importlib
import pkgutil
import types
import typing
from collections.abc import Callable
from dataclasses import dataclass
from functools import cache
from typing import Any

from shufflecheck.common.errors import InputError
from shufflecheck.models.base import Step

__all__ = [
    "SPECTRUM_UNITS",
    "ModelEntry",
    "Parameter",
    "curve_models",
    "entries",
    "entry",
    "markdown_table",
    "register_model",
    "spectrum_models",
    "step_types",
]

#: modules of this package that hold no model
_NOT_MODELS = frozenset({"base", "blocks", "interleaving", "permute", "procedures", "registry"})

_ENTRIES: dict[str, ModelEntry] = {}


@dataclass(frozen=True)
class Parameter:
    """One parameter of a step, from its dataclass field: name, type in words, default."""

    name: str
    kind: str
    default: object

    def describe(self) -> str:
        default = "none" if self.default is None else self.default
        return f"{self.name}={default}"


def _type_words(annotation: object) -> str:
    hint = typing.get_origin(annotation)
    if hint in (typing.Union, types.UnionType):
        parts = [_type_words(a) for a in typing.get_args(annotation) if a is not type(None)]
        optional = type(None) in typing.get_args(annotation)
        return " or ".join(parts) + (" (optional)" if optional else "")
    return {int: "integer", float: "number", str: "text", bool: "yes/no"}.get(
        annotation,  # type: ignore[call-overload]
        str(annotation),
    )


#: a spectrum taking ``progress`` calls ``progress(done)`` with ``done`` out of this
SPECTRUM_UNITS = 100


@dataclass(frozen=True)
class ModelEntry:
    """Everything the tool knows about one shuffle step, in one place.

    Attributes
    ----------
    step : type of Step
        The step class; its ``keyword`` is the model's name (the word in procedure text and
        in ``mix`` / ``spectrum``), its ``summary`` the one-line description, and its
        dataclass fields the parameters.
    steps_word : str
        Plural noun for "after k ..." (``riffles``, ``machine passes``).
    sources : tuple of str
        Full citations of the model and of its exact law, if any.
    curve : callable or None
        ``curve(cards, max_steps, **options) -> MixingCurve``: exact distances to uniform
        for ``k = 1..max_steps`` (``mix``); None when no exact law is implemented.
    curve_options : tuple of str
        The keyword options ``curve`` takes (from ``hands``, ``shelves``, ``hold``,
        ``method``, ``progress``).
    spectrum : callable or None
        ``spectrum(cards, **options) -> list[Eigenvalue]`` (``spectrum``).
    spectrum_options : tuple of str
        The keyword options ``spectrum`` takes.
    default_steps : callable or None
        ``default_steps(cards)``: steps shown by ``mix`` by default (past the cutoff).
    steps_limit : int or None
        The most steps the exact curve is offered for: when no step count is given and the
        target is not met within ``default_steps``, ``mix`` doubles the range up to this
        limit (None: the documented ``max_steps`` limit of every model).
    exact : str
        What exact analysis exists, in a few words with its limits (docs table); empty
        when there is none (then procedures with this step get bounds or estimates).
    """

    step: type[Step]
    steps_word: str
    sources: tuple[str, ...]
    curve: Callable[..., Any] | None = None
    curve_options: tuple[str, ...] = ()
    spectrum: Callable[..., Any] | None = None
    spectrum_options: tuple[str, ...] = ()
    default_steps: Callable[[int], int] | None = None
    exact: str = ""
    steps_limit: int | None = None

    def __post_init__(self) -> None:
        if not (isinstance(self.step, type) and issubclass(self.step, Step)):
            raise TypeError(f"a model entry needs a Step class, got {self.step!r}")
        if not self.step.keyword or not self.step.summary:
            raise TypeError(f"{self.step.__name__} needs a keyword and a summary")
        if not self.sources:
            raise TypeError(f"model {self.step.keyword!r} needs at least one published source")
        if self.curve is not None and self.default_steps is None:
            raise TypeError(f"model {self.step.keyword!r}: a curve needs default_steps")

    @property
    def name(self) -> str:
        """The model's name: the step's keyword (``riffle``, ``top-to-random``)."""
        return self.step.keyword

    @property
    def summary(self) -> str:
        return self.step.summary

    @property
    def deterministic(self) -> bool:
        return self.step.deterministic

    def parameters(self) -> tuple[Parameter, ...]:
        """The step's parameters, from its dataclass fields, in order."""
        hints = typing.get_type_hints(self.step)
        return tuple(
            Parameter(f.name, _type_words(hints[f.name]), f.default)
            for f in dataclasses.fields(self.step)
        )

    def field_types(self) -> dict[str, object]:
        """Parameter name -> annotation, for typed parsing of procedure text."""
        hints = typing.get_type_hints(self.step)
        return {f.name: hints[f.name] for f in dataclasses.fields(self.step)}


def register_model(model: ModelEntry) -> ModelEntry:
    """Add ``model`` to the registry (once per step class; a keyword is claimed once)."""
    known = _ENTRIES.get(model.name)
    if known is not None and known.step is not model.step:
        raise RuntimeError(f"two step classes claim the keyword {model.name!r}")
    _ENTRIES[model.name] = model
    return model


@cache
def _load() -> None:
    import shufflecheck.models as package

    for info in pkgutil.iter_modules(package.__path__):
        if info.name not in _NOT_MODELS and not info.name.startswith("_"):
            importlib.import_module(f"{package.__name__}.{info.name}")


def entries() -> tuple[ModelEntry, ...]:
    """Every registered model, by name."""
    _load()
    return tuple(_ENTRIES[name] for name in sorted(_ENTRIES))


def entry(name: str, *, need: str | None = None) -> ModelEntry:
    """The model called ``name``; ``need`` (``"curve"`` or ``"spectrum"``) restricts the
    choice to models with that capability. Unknown names get a suggestion."""
    _load()
    pool = {e.name: e for e in entries() if need is None or getattr(e, need) is not None}
    if name in pool:
        return pool[name]
    what = {"curve": " with an exact distance curve", "spectrum": " with a spectrum"}.get(
        need or "", ""
    )
    close = difflib.get_close_matches(name, list(pool), n=1, cutoff=0.6)
    hint = f"; did you mean {close[0]!r}?" if close else ""
    raise InputError(
        f"unknown model {name!r}{hint} (models{what}: {', '.join(pool)})", argument="model"
    )


def step_types() -> dict[str, type[Step]]:
    """Procedure keyword -> step class, for every registered model."""
    return {e.name: e.step for e in entries()}


def curve_models() -> tuple[str, ...]:
    """Names of the models with an exact distance curve (the choices of ``mix``)."""
    return tuple(e.name for e in entries() if e.curve is not None)


def spectrum_models() -> tuple[str, ...]:
    """Names of the models with a spectrum (the choices of ``spectrum``)."""
    return tuple(e.name for e in entries() if e.spectrum is not None)


def markdown_table() -> str:
    """The model table of docs/models.md, generated from the registry (a test compares)."""
    lines = [
        "| step | what it does | parameters (defaults) | exact analysis | `mix` | `spectrum` |",
        "|---|---|---|---|---|---|",
    ]
    for e in entries():
        params = ", ".join(f"`{p.describe()}`" for p in e.parameters()) or "none"
        exact = e.exact or "none (bounds and estimates)"
        mix = "yes" if e.curve is not None else "no"
        spec = "yes" if e.spectrum is not None else "no"
        lines.append(f"| `{e.name}` | {e.summary} | {params} | {exact} | {mix} | {spec} |")
    return "\n".join(lines) + "\n"
