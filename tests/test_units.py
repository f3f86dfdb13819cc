"""Quantity strings: parsing with units, offset temperatures, tolerances, display."""

import math

import pytest

from margincheck.units import QuantityError, format_value, parse_quantity, parse_tolerance


@pytest.mark.parametrize("text, kind, si", [
    ("650 V", "voltage", 650.0),
    ("1.2 kV", "voltage", 1200.0),
    ("25 nH", "inductance", 25e-9),
    ("2.2 ohm", "resistance", 2.2),
    ("2.2 Ω", "resistance", 2.2),
    ("100 uF", "capacitance", 100e-6),
    ("100 µF", "capacitance", 100e-6),
    ("6 A/ns", "current_slew_rate", 6e9),
    ("40 kHz", "frequency", 40e3),
    ("20 S", "conductance", 20.0),
    ("-20 degC", "temperature", 253.15),   # an offset unit with a sign: split before pint sees it
    ("-20 °C", "temperature", 253.15),
    ("90 degC", "temperature", 363.15),
    ("300 K", "temperature", 300.0),
    ("25 K", "temperature_difference", 25.0),
    ("25 degC", "temperature_difference", 25.0),  # a span of 25 degC is 25 K
    ("0.8", "dimensionless", 0.8),
])
def test_parse(text, kind, si):
    assert parse_quantity(text, kind) == pytest.approx(si, rel=1e-12)


@pytest.mark.parametrize("raw, message", [
    (400, 'expected a voltage such as "400 V", got the bare number 400 (a unit is required)'),
    ("400", 'expected a voltage such as "400 V", got "400" (a unit is required)'),
    ("400 A", 'expected a voltage such as "400 V", got "400 A"'),
    ("5 furlong", 'got "5 furlong" (unknown unit "furlong")'),
    ("nan V", "(no number in front)"),
    ("1e999 V", "(the number is not finite)"),
    (True, "got the boolean true"),
    ("0;", 'got "0;" (unknown unit ";")'),            # found by fuzzing: pint's parser asserted on this
    ("5 (V", 'got "5 (V" (unknown unit "(V")'),       # and raised a tokenizer error on this
])
def test_refused(raw, message):
    with pytest.raises(QuantityError, match=message.replace("(", r"\(").replace(")", r"\)")):
        parse_quantity(raw, "voltage")


def test_tolerances():
    assert parse_tolerance("5 %", "voltage").span(400.0) == pytest.approx(20.0)
    assert parse_tolerance("5 %", "voltage").span(-3.0) == pytest.approx(0.15)
    assert parse_tolerance("0.5 V", "voltage").span(400.0) == pytest.approx(0.5)
    assert parse_tolerance("5 K", "temperature").span(300.0) == pytest.approx(5.0)
    with pytest.raises(QuantityError, match="must be a temperature difference"):
        parse_tolerance("5 %", "temperature")
    with pytest.raises(QuantityError, match='expected a tolerance such as "5 %" or a voltage'):
        parse_tolerance("5 A", "voltage")


@pytest.mark.parametrize("raw, kind, message", [
    ("\u00b15%", "voltage", 'written without a sign: write "5 %"'),
    ("+/-0.5V", "voltage", 'written without a sign: write "0.5 V"'),
    ("+5 %", "voltage", "give min and max"),                   # one-sided? it was read as symmetric before
    (5, "voltage", 'needs its unit: write "5 %" for a percentage, or a voltage such as "400 V"'),
    ("5", "temperature", 'needs its unit: write "5 K"; got "5"'),
])
def test_tolerances_that_would_be_a_guess_are_refused_with_the_form_to_write(raw, kind, message):
    with pytest.raises(QuantityError, match=message.replace("(", r"\(").replace(")", r"\)")):
        parse_tolerance(raw, kind)


@pytest.mark.parametrize("si, kind, text", [
    (619.636, "voltage", "619.6 V"),
    (253.15, "temperature", "-20 degC"),
    (100e-6, "capacitance", "100 uF"),
    (8e-12, "capacitance", "8 pF"),
    (30e-9, "inductance", "30 nH"),
    (6.6545e9, "current_slew_rate", "6.655 A/ns"),
    (8.82, "energy", "8.82 J"),
    # the prefix is chosen per value, after rounding to the digits shown
    (109.475e6, "frequency", "109.5 MHz"),
    (999.96e3, "frequency", "1 MHz"),
    (32e3, "frequency", "32 kHz"),
    (1200.0, "voltage", "1.2 kV"),
    (0.78, "voltage", "780 mV"),
    (3e-3, "current", "3 mA"),
    (5e6, "current_slew_rate", "5 A/us"),
    (250e9, "voltage_slew_rate", "250 V/ns"),
    (1.2e-6, "time", "1.2 us"),
    (13.85e-9, "time", "13.85 ns"),
    (1500.0, "power", "1.5 kW"),
    (0.04, "resistance", "40 mohm"),
    (289.2e-6, "energy", "289.2 uJ"),
    (-5e-3, "temperature_coefficient", "-5 mV/K"),
    (0.0, "inductance", "0 nH"),
    (math.nan, "voltage", "n/a"),
    (None, "voltage", "n/a"),
])
def test_format_value(si, kind, text):
    assert format_value(si, kind) == text
