"""``sharpzone.errors``: errors carry their parts and build their one line in one place."""

from __future__ import annotations

import pickle

from sharpzone.errors import InvalidValue, NotFound


def test_parts_build_the_line():
    error = InvalidValue(what="focal length", value="fifty", problem="is not a length", expected="millimetres")
    assert error.message == "focal length 'fifty' is not a length: expected millimetres"
    assert (error.what, error.value, error.expected, error.option) == ("focal length", "fifty", "millimetres", None)


def test_with_option_names_the_option_once_without_touching_the_text():
    error = InvalidValue(what="focal length", value="fifty", problem="is not a length", hint="try 50")
    named = error.with_option("--focal").with_option("--other")
    assert named.option == "--focal"
    assert str(named) == "--focal: 'fifty' is not a length (try 50)"
    assert error.option is None  # the original is unchanged


def test_a_plain_sentence_still_works_and_pickles():
    error = NotFound("no lens named 'X'", hint="see 'sharpzone lens list'")
    assert str(error) == "no lens named 'X' (see 'sharpzone lens list')"
    assert pickle.loads(pickle.dumps(error)).message == "no lens named 'X'"
