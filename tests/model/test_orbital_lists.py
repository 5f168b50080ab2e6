"""Orbital lists (0-3,7) and sign lists (+-+) read back what they print, and refuse what is not one."""

from __future__ import annotations

import pytest
from builders import PROPERTY_SETTINGS
from hypothesis import given
from hypothesis import strategies as st

from integrity.errors import FieldError
from integrity.model.orbital_lists import (
    format_orbital_list,
    format_signs,
    parse_orbital_list,
    parse_per_spin,
    parse_signs,
)


@PROPERTY_SETTINGS
@given(st.lists(st.integers(0, 60), max_size=40).filter(bool))
def test_an_orbital_list_reads_back_what_it_prints(indices):
    text = format_orbital_list(indices)
    assert parse_orbital_list(text) == tuple(indices)


@PROPERTY_SETTINGS
@given(st.lists(st.sampled_from([-1, 1]), min_size=1, max_size=30))
def test_signs_read_back_what_they_print(signs):
    assert parse_signs(format_signs(signs)) == tuple(signs)


def test_ranges_are_inclusive_and_order_is_kept():
    assert parse_orbital_list("7, 0-2,4") == (7, 0, 1, 2, 4)
    assert format_orbital_list(range(10)) == "0-9"
    assert format_orbital_list([3, 4, 9, 8]) == "3,4,9,8"
    assert parse_signs("+, -, +") == (1, -1, 1)


def test_per_spin_lists_split_at_the_slash():
    assert parse_per_spin("0-2", parse_orbital_list, "order") == (0, 1, 2)
    assert parse_per_spin("1,0/0,1", parse_orbital_list, "order") == ((1, 0), (0, 1))
    assert parse_per_spin("+-/-+", parse_signs, "signs") == ((1, -1), (-1, 1))


@pytest.mark.parametrize(
    ("text", "words"),
    [("", "empty"), ("1,,2", "not an orbital index"), ("-1", "not an orbital index"), ("4-2", "not a range")],
)
def test_a_malformed_orbital_list_names_the_item(text, words):
    with pytest.raises(FieldError, match=words):
        parse_orbital_list(text, "active")


@pytest.mark.parametrize("text", ["", "+x-", "1,-1"])
def test_a_sign_list_holds_only_plus_and_minus(text):
    with pytest.raises(FieldError, match=r"one \+ or -"):
        parse_signs(text)


def test_three_lists_are_not_a_per_spin_pair():
    with pytest.raises(FieldError, match="alpha/beta"):
        parse_per_spin("0/1/2", parse_orbital_list, "order")
