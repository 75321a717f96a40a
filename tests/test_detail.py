"""--detail: the stroke cost in a painter's words (layerplan.options)."""

import pytest

from layerplan import options
from layerplan.cli import _parser as build_parser
from layerplan.options import DETAIL_STROKE_COST, OPTIONS, OptionError, settings_kwargs, values_from_cli
from layerplan.settings import DEFAULT_STROKE_COST, Settings


def _settings(argv):
    args = build_parser().parse_args(["plan", "photo.jpg", "--out", "out", *argv])
    return Settings(**settings_kwargs(values_from_cli(args, "plan")))


def test_each_word_sets_its_stroke_cost_and_finer_means_cheaper_strokes():
    got = {w: _settings(["--detail", w]).stroke_cost for w in DETAIL_STROKE_COST}
    assert got == DETAIL_STROKE_COST
    assert got["fine"] < got["medium"] < got["broad"]  # a cheaper stroke is painted for less detail


def test_medium_is_the_default_stroke_cost_and_no_word_leaves_it_alone():
    assert DETAIL_STROKE_COST["medium"] == DEFAULT_STROKE_COST
    assert _settings([]).stroke_cost == DEFAULT_STROKE_COST
    assert _settings(["--stroke-cost", "2"]).stroke_cost == 2.0


def test_words_are_read_ignoring_case_and_spaces():
    assert OPTIONS["detail"].parse(" Fine ") == DETAIL_STROKE_COST["fine"]


def test_an_unknown_word_is_refused_with_the_words_listed():
    with pytest.raises(OptionError, match="broad, medium, fine.*'sharp'"):
        OPTIONS["detail"].parse("sharp")


def test_the_command_line_names_the_flag(capsys):
    with pytest.raises(options.CliOptionError, match="--detail"):
        build_parser().parse_args(["plan", "photo.jpg", "--out", "out", "--detail", "sharp"])
