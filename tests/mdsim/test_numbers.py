"""The two-figure rule for values with errors (common practice in reporting measured values, no source)."""
import pytest

from mdsim.numbers import round_to_error, value_with_error


@pytest.mark.parametrize("value, stderr, text", [
    (60.2834, 0.0912, ("60.283", "0.091")),
    (-5.4631, 0.01423, ("-5.463", "0.014")),
    (0.0004, 0.0996, ("0.00", "0.10")),      # the error rounds up to 0.10: two figures kept
    (1.23456, 0.999, ("1.2", "1.0")),
    (12345.0, 234.0, ("12350", "230")),
    (-37.04, 0.34, ("-37.04", "0.34")),
])
def test_error_has_two_significant_figures_and_the_value_matches(value, stderr, text):
    assert round_to_error(value, stderr) == text


def test_no_error_no_plus_minus_and_no_negative_zero():
    assert value_with_error(-5.4575, None, "K") == "-5.4575 K"
    assert value_with_error(-5.4575, 0.0, "K") == "-5.4575 K"
    assert value_with_error(-0.0001, 0.012, "K") == "0.000 ± 0.012 K"
    assert value_with_error(None, 0.1) == "n/a"
