"""The model registry: one entry per step, and every lister reads it."""

from __future__ import annotations

import importlib
import inspect
import math
import pkgutil
from fractions import Fraction
from pathlib import Path

import pytest

import shufflecheck.models as models_package
from shufflecheck.cli.characters import SpectrumModel
from shufflecheck.cli.mix import MixModel
from shufflecheck.common.errors import InputError
from shufflecheck.models import distance_curve, spectrum
from shufflecheck.models.base import Step
from shufflecheck.models.procedures import parse_procedure
from shufflecheck.models.registry import (
    curve_models,
    entries,
    entry,
    markdown_table,
    spectrum_models,
    step_types,
)

DOCS = Path(__file__).resolve().parents[1] / "docs"


def _step_classes() -> set[type]:
    """Every concrete Step subclass defined in a module of shufflecheck.models."""
    found = set()
    for info in pkgutil.iter_modules(models_package.__path__):
        module = importlib.import_module(f"shufflecheck.models.{info.name}")
        for _, obj in inspect.getmembers(module, inspect.isclass):
            if issubclass(obj, Step) and obj.keyword and not inspect.isabstract(obj):
                found.add(obj)
    return found


class TestRegistry:
    def test_every_step_class_is_registered_once(self):
        registered = [e.step for e in entries()]
        assert len(registered) == len(set(registered))
        assert set(registered) == _step_classes()

    def test_names_are_keywords(self):
        assert {e.name for e in entries()} == set(step_types())
        for e in entries():
            assert e.name == e.step.keyword and e.summary and e.sources and e.steps_word

    def test_parameters_come_from_the_dataclass(self):
        riffle = entry("riffle")
        assert [(p.name, p.kind, p.default) for p in riffle.parameters()] == [
            ("hands", "integer", 2)
        ]
        cut = entry("cut")
        assert [p.name for p in cut.parameters()] == ["spread", "least"]

    def test_unknown_model_gets_a_suggestion(self):
        with pytest.raises(InputError, match="did you mean 'riffle'"):
            entry("rifle")
        with pytest.raises(InputError, match="with an exact distance curve"):
            entry("strip", need="curve")

    def test_parser_accepts_every_registered_step(self):
        for e in entries():
            assert parse_procedure(e.name).items[0].step.__class__ is e.step


class TestListersReadTheRegistry:
    def test_mix_choices(self):
        assert {m.value for m in MixModel} == set(curve_models())

    def test_spectrum_choices(self):
        assert {m.value for m in SpectrumModel} == set(spectrum_models())

    def test_docs_table_is_generated_from_the_registry(self):
        text = (DOCS / "models.md").read_text(encoding="utf-8")
        assert markdown_table() in text

    def test_curves_and_spectra_work_for_every_entry(self):
        for name in curve_models():
            curve = distance_curve(name, 5, 2)
            assert [r.steps for r in curve.rows] == [1, 2]
            assert all(r.kind in ("exact", "bound") for r in curve.rows)

    @pytest.mark.parametrize("name", spectrum_models())
    def test_spectrum_counts_every_arrangement(self, name):
        # an operator on the n! arrangements has n! eigenvalues with multiplicity
        # (brute-force count, n = 5: 5! = 120)
        values = spectrum(name, 5)
        assert sum(v.multiplicity for v in values) == math.factorial(5)
        assert max(Fraction(v.value) for v in values) == 1
