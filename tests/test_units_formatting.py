"""Units (body weight with a unit, lab conversions) and safe number formatting.

Reference factors are the textbook ones, named beside each check; the molar masses
the core reads from ``species_data/molar_masses.csv`` are checked here a second way
with the ``periodictable`` package (tests/test_molar_masses.py checks every stored
mass against molmass and periodictable). Expected values are computed here, never
taken from the module under test.
"""

from __future__ import annotations

import math

import periodictable
import pytest
from hypothesis import given
from hypothesis import strategies as st

from vetfluid.common.errors import InputError
from vetfluid.common.formatting import default_decimals, format_number, format_quantity
from vetfluid.common.units import (
    mg_per_dl_to_mmol_per_l,
    mg_per_dl_to_umol_per_l,
    mmol_per_l_to_mg_per_dl,
    molar_mass_g_per_mol,
    parse_weight_kg,
    read_decimal,
    umol_per_l_to_mg_per_dl,
)

reference = pytest.mark.reference

# International avoirdupois pound, exact by the 1959 international yard and pound
# agreement. Typed here on purpose (not imported) so the test checks the module.
LB_IN_KG = 0.45359237


# ---- parse_weight_kg: worked examples ------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "kg"),
    [
        ("350 g", 0.35),
        ("0.35 kg", 0.35),
        ("20kg", 20.0),
        ("20 KG", 20.0),
        ("  7 kg  ", 7.0),
        ("1,5 kg", 1.5),  # decimal comma, as typed on European keyboards
        ("0,35 kg", 0.35),
        ("2500 mg", 0.0025),
        ("35g", 0.035),
    ],
)
def test_parse_weight_examples(text, kg):
    assert parse_weight_kg(text) == pytest.approx(kg, rel=1e-12)


@reference
@pytest.mark.parametrize(
    ("text", "kg"),
    [
        # 1 lb = 0.45359237 kg exactly (international avoirdupois pound, 1959)
        ("1 lb", 0.45359237),
        ("4.2 lb", 4.2 * 0.45359237),  # = 1.905087954 kg
        ("4.2 lbs", 1.905087954),
        ("100 lb", 45.359237),
        ("2.20462262 lb", 1.0),  # 1 / 0.45359237 = 2.2046226218… lb per kg
    ],
)
def test_parse_weight_pounds_international_avoirdupois_1959(text, kg):
    assert parse_weight_kg(text) == pytest.approx(kg, rel=1e-9)


def test_one_pound_is_exact():
    # Exact definition, so no tolerance at all (international avoirdupois pound, 1959).
    assert parse_weight_kg("1 lb") == 0.45359237


def test_bare_number_needs_a_unit():
    # The design brief: a bare number is an error, never a silent guess (gram/kilogram slip).
    with pytest.raises(InputError) as err:
        parse_weight_kg("350")
    assert err.value.field == "weight"
    with pytest.raises(InputError):
        parse_weight_kg(350)
    with pytest.raises(InputError):
        parse_weight_kg(3.5)


def test_bare_number_with_default_unit():
    assert parse_weight_kg(350, default_unit="g") == pytest.approx(0.35)
    assert parse_weight_kg(4.5, default_unit="kg") == pytest.approx(4.5)
    assert parse_weight_kg("350", default_unit="g") == pytest.approx(0.35)
    # a unit in the text wins over the default
    assert parse_weight_kg("2 kg", default_unit="g") == pytest.approx(2.0)


@pytest.mark.parametrize(
    "bad",
    [
        "",
        "   ",
        "kg",
        "abc",
        "-1 kg",
        "0 kg",
        "0 g",
        "5 stone",
        "5 st",
        "5 oz",  # not a unit the module accepts; must be refused, not guessed
        "5. kg",  # a bare trailing decimal point is ISMP-error-prone and unreadable
        "1.2.3 kg",
        "1 000 g",
        "twenty kg",
        "nan kg",
        "inf kg",
        "1e400 kg",  # overflows to infinity
        "5 kg 3 g",
        "kg 5",
    ],
)
def test_bad_weight_text_raises_input_error(bad):
    with pytest.raises(InputError) as err:
        parse_weight_kg(bad)
    assert err.value.field == "weight"
    assert err.value.message  # a message the user can read


@pytest.mark.parametrize("bad", [True, False, None, [1], {"kg": 1}])
def test_bad_weight_types_raise_input_error(bad):
    with pytest.raises(InputError):
        parse_weight_kg(bad, default_unit="kg")


@pytest.mark.parametrize("bad", [float("nan"), float("inf"), -3.0, 0, -0.0])
def test_bad_weight_numbers_raise_input_error(bad):
    with pytest.raises(InputError):
        parse_weight_kg(bad, default_unit="kg")


def test_unknown_unit_error_lists_the_known_units():
    with pytest.raises(InputError) as err:
        parse_weight_kg("5 stone")
    assert "kg" in (err.value.fix or "") and "lb" in (err.value.fix or "")


def test_thousands_separator_is_never_read_as_a_decimal_comma():
    # Safety (the design brief: the gram/kilogram slip is the classic dosing error). "1,500 g"
    # written with an English thousands separator means 1500 g. Reading it as a
    # decimal comma gives 1.5 g, a thousandfold error. The string is ambiguous, so
    # the parser may refuse it (InputError) or read 1.5 kg. It must never return
    # 0.0015 kg without a word.
    try:
        kg = parse_weight_kg("1,500 g")
    except InputError:
        return
    assert kg == pytest.approx(1.5), f'"1,500 g" read as {kg} kg'


# ---- parse_weight_kg: properties -----------------------------------------------------------

# From a 2 g finch hatchling to a 2 t animal. Covers every patient the table describes.
_kg = st.floats(min_value=1e-3, max_value=2000, allow_nan=False, allow_infinity=False)


@given(kg=_kg)
def test_round_trip_g_kg(kg):
    assert parse_weight_kg(f"{kg * 1000!r} g") == pytest.approx(kg, rel=1e-12)
    assert parse_weight_kg(f"{kg!r} kg") == pytest.approx(kg, rel=1e-15)


@given(kg=_kg)
def test_round_trip_kg_lb(kg):
    pounds = kg / LB_IN_KG
    assert parse_weight_kg(f"{pounds!r} lb") == pytest.approx(kg, rel=1e-12)


@given(kg=_kg)
def test_round_trip_g_lb_agree(kg):
    grams = parse_weight_kg(f"{kg * 1000!r} g")
    pounds = parse_weight_kg(f"{kg / LB_IN_KG!r} lb")
    assert grams == pytest.approx(pounds, rel=1e-12)


@given(text=st.text(max_size=30))
def test_any_text_gives_a_positive_weight_or_an_input_error(text):
    # Invalid input is always our typed InputError, never ValueError/TypeError etc.
    try:
        kg = parse_weight_kg(text)
    except InputError:
        return
    assert math.isfinite(kg) and kg > 0


@given(text=st.text(alphabet=st.characters(blacklist_categories=("Nd",)), max_size=30))
def test_text_without_digits_is_an_input_error(text):
    with pytest.raises(InputError):
        parse_weight_kg(text)


@given(
    number=st.floats(min_value=0.001, max_value=1000, allow_nan=False),
    unit=st.sampled_from(["stone", "st", "oz", "t", "ton", "gram", "kilo", "pound", "ml", "l"]),
)
def test_unknown_units_are_an_input_error(number, unit):
    with pytest.raises(InputError):
        parse_weight_kg(f"{number!r} {unit}")


@given(number=st.floats(min_value=0.001, max_value=1000, allow_nan=False))
def test_negative_weights_are_an_input_error(number):
    with pytest.raises(InputError):
        parse_weight_kg(f"-{number!r} kg")


@given(
    value=st.one_of(
        st.none(),
        st.booleans(),
        st.lists(st.integers()),
        st.dictionaries(st.text(max_size=3), st.integers()),
    )
)
def test_non_numbers_are_an_input_error(value):
    with pytest.raises(InputError):
        parse_weight_kg(value, default_unit="kg")


# ---- laboratory conversions ----------------------------------------------------------------


@reference
def test_glucose_textbook_factor_18():
    # Textbook factor: glucose 1 mmol/L = 18.0 mg/dL (molar mass 180.16 g/mol ÷ 10).
    assert mmol_per_l_to_mg_per_dl(1, "glucose") == pytest.approx(18.0, rel=1e-3)
    assert mmol_per_l_to_mg_per_dl(5.5, "glucose") == pytest.approx(5.5 * 18.0, rel=1e-3)
    assert mg_per_dl_to_mmol_per_l(90, "glucose") == pytest.approx(90 / 18.0, rel=1e-3)


@reference
def test_bun_textbook_factor_2_8():
    # Textbook factor: BUN (mg/dL) ÷ 2.8 = urea (mmol/L); BUN counts urea's two N
    # atoms, 2 × 14.007 = 28.01 g/mol. The same 2.8 is the divisor in Goldkamp &
    # Schaer 2007's calculated-osmolality formula.
    assert mg_per_dl_to_mmol_per_l(28, "bun") == pytest.approx(10.0, rel=1e-3)
    assert mg_per_dl_to_mmol_per_l(20, "bun") == pytest.approx(20 / 2.8, rel=1e-3)
    assert mmol_per_l_to_mg_per_dl(1, "bun") == pytest.approx(2.8, rel=1e-3)


@reference
def test_creatinine_textbook_factor_88_4():
    # Textbook factor: creatinine 1 mg/dL = 88.4 µmol/L (113.12 g/mol).
    assert mg_per_dl_to_umol_per_l(1, "creatinine") == pytest.approx(88.4, abs=0.05)
    assert umol_per_l_to_mg_per_dl(176.8, "creatinine") == pytest.approx(2.0, abs=0.002)
    assert mg_per_dl_to_umol_per_l(1.6, "creatinine") == pytest.approx(1.6 * 88.4, rel=1e-3)


@reference
def test_urea_molar_mass_and_bun_ratio():
    # Urea CH4N2O, 60.06 g/mol: 1 mmol/L = 6.006 mg/dL urea. Urea mg/dL = BUN mg/dL ×
    # 2.14 (60.06 / 28.01); the 2.14 is from memory, the arithmetic is checked here.
    assert mmol_per_l_to_mg_per_dl(1, "urea") == pytest.approx(6.006, abs=0.002)
    ratio = mmol_per_l_to_mg_per_dl(1, "urea") / mmol_per_l_to_mg_per_dl(1, "bun")
    assert ratio == pytest.approx(2.14, abs=0.005)


@reference
def test_calculated_osmolality_goldkamp_schaer_2007():
    # Goldkamp C, Schaer M. Compend Contin Educ Vet 2007;29:148–161:
    # calc. osmolality = 2 Na + glucose (mg/dL)/18 + BUN (mg/dL)/2.8.
    # Worked example: Na 145, glucose 100 mg/dL, BUN 20 mg/dL → 290 + 5.556 + 7.143.
    expected = 2 * 145 + 100 / 18 + 20 / 2.8
    assert expected == pytest.approx(302.70, abs=0.01)  # hand arithmetic
    from_module = (
        2 * 145 + mg_per_dl_to_mmol_per_l(100, "glucose") + mg_per_dl_to_mmol_per_l(20, "bun")
    )
    assert from_module == pytest.approx(expected, abs=0.05)


@pytest.mark.parametrize(
    ("analyte", "formula"),
    [("glucose", "C6H12O6"), ("urea", "CH4N2O"), ("bun", "N2"), ("creatinine", "C4H7N3O")],
)
def test_molar_masses_agree_with_periodictable(analyte, formula):
    # A second, independent library (periodictable) gives the same molar mass.
    independent = periodictable.formula(formula).mass
    assert mmol_per_l_to_mg_per_dl(10, analyte) == pytest.approx(independent, rel=1e-4)


@pytest.mark.parametrize("analyte", ["glucose", "urea", "bun", "creatinine", "GLUCOSE", "Bun"])
@given(value=st.floats(min_value=0, max_value=1e4, allow_nan=False))
def test_lab_conversions_round_trip(analyte, value):
    there = mmol_per_l_to_mg_per_dl(value, analyte)
    assert mg_per_dl_to_mmol_per_l(there, analyte) == pytest.approx(value, rel=1e-12, abs=1e-12)
    micro = mg_per_dl_to_umol_per_l(value, analyte)
    assert umol_per_l_to_mg_per_dl(micro, analyte) == pytest.approx(value, rel=1e-12, abs=1e-12)


def test_unknown_analyte_raises_input_error_with_the_known_ones():
    with pytest.raises(InputError) as err:
        mmol_per_l_to_mg_per_dl(5, "sodium")
    assert err.value.field == "analyte"
    assert "glucose" in (err.value.fix or "")
    with pytest.raises(InputError):
        mg_per_dl_to_mmol_per_l(5, "")


def test_bad_formula_raises_input_error():
    with pytest.raises(InputError):
        molar_mass_g_per_mol("Xq9")


_CONVERTERS = (
    mmol_per_l_to_mg_per_dl,
    mg_per_dl_to_mmol_per_l,
    mg_per_dl_to_umol_per_l,
    umol_per_l_to_mg_per_dl,
)


@pytest.mark.parametrize("bad", [float("nan"), float("inf"), -5.0])
def test_lab_conversions_refuse_impossible_concentrations(bad):
    # A concentration cannot be negative or non-finite. STYLE.md: validation raises
    # our typed errors; NaN must not flow silently into a plan.
    for convert in _CONVERTERS:
        with pytest.raises(InputError):
            convert(bad, "glucose")


# ---- safe number formatting (ISMP error-prone dose designations) ---------------------------


@pytest.mark.parametrize(
    ("value", "unit", "text"),
    [
        (0.5, "mL", "0.5 mL"),  # leading zero: never ".5 mL" (ISMP: naked decimal point)
        (5, "mL", "5 mL"),  # no trailing zero: never "5.0 mL" (ISMP: trailing zero)
        (5.0, "mL", "5 mL"),
        (10, "mL", "10 mL"),  # the zero of an integer stays
        (100, "mL/h", "100 mL/h"),
        (1000.0, "mL", "1000 mL"),
        (0.05, "mL", "0.05 mL"),
        (12.5, "mL/h", "12.5 mL/h"),
        (33.3333, "drops/min", "33.3 drops/min"),
        (-0.5, "mmol/L", "-0.5 mmol/L"),
    ],
)
def test_format_quantity_safe_way(value, unit, text):
    assert format_quantity(value, unit) == text


@pytest.mark.parametrize(
    ("value", "decimals", "text"),
    [
        (5.0, 1, "5"),
        (5.10, 2, "5.1"),
        (0.126, 2, "0.13"),
        (100.0, 2, "100"),
        (20.0, 3, "20"),
        (0.4, 0, "0"),
        (-0.4, 0, "0"),  # never "-0"
        (-0.04, 1, "0"),
        (2.5, 1, "2.5"),
    ],
)
def test_format_number_with_decimals(value, decimals, text):
    assert format_number(value, decimals=decimals) == text


@pytest.mark.parametrize(
    ("value", "text"),
    [
        (742.2905, "742"),  # three significant figures by default
        (22.627, "22.6"),
        (2.3456, "2.35"),
        (0.035, "0.035"),  # two significant figures for small volumes
        (0.0123, "0.012"),
        (0, "0"),
    ],
)
def test_format_number_default_precision(value, text):
    assert format_number(value) == text


def test_quantity_puts_a_space_between_number_and_unit():
    # ISMP error-prone designation: number and unit run together ("10mL").
    assert format_quantity(10, "mL") == "10 mL"
    assert format_quantity(0.25, "mL/kg/h").split(" ", 1) == ["0.25", "mL/kg/h"]


def test_quantity_needs_a_unit():
    with pytest.raises(InputError) as err:
        format_quantity(5, "")
    assert err.value.field == "unit"


@pytest.mark.parametrize("bad", [float("nan"), float("inf"), float("-inf")])
def test_non_finite_numbers_are_an_input_error(bad):
    with pytest.raises(InputError):
        format_number(bad)
    with pytest.raises(InputError):
        format_quantity(bad, "mL")


_values = st.floats(min_value=-1e9, max_value=1e9, allow_nan=False, allow_infinity=False)


def _assert_safe(text: str) -> None:
    assert text, "empty text"
    assert not text.startswith("."), f"bare leading decimal point: {text!r}"
    assert not text.startswith("-."), f"bare leading decimal point: {text!r}"
    assert not text.endswith("."), f"trailing decimal point: {text!r}"
    if "." in text:
        assert not text.endswith("0"), f"trailing zero: {text!r}"
    assert text != "-0"
    assert "e" not in text.lower(), f"scientific notation: {text!r}"


@given(value=_values)
def test_format_number_never_trailing_zero_or_bare_point(value):
    text = format_number(value)
    _assert_safe(text)
    places = default_decimals(value)
    assert float(text) == pytest.approx(value, abs=0.5 * 10**-places + 1e-9 * abs(value))


@given(value=_values, decimals=st.integers(min_value=0, max_value=6))
def test_format_number_with_any_decimals_is_safe(value, decimals):
    text = format_number(value, decimals=decimals)
    _assert_safe(text)
    assert float(text) == pytest.approx(value, abs=0.5 * 10**-decimals + 1e-9 * abs(value))


@given(value=_values, unit=st.sampled_from(["mL", "mL/h", "drops/min", "mmol/L", "kg"]))
def test_format_quantity_always_shows_the_unit(value, unit):
    text = format_quantity(value, unit)
    number, shown_unit = text.split(" ", 1)
    assert shown_unit == unit
    _assert_safe(number)


# ---- read_decimal: numbers typed in fields -------------------------------------------------


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("7.5", 7.5),
        ("7,5", 7.5),
        (" 12 ", 12.0),
        ("", None),
        ("  ", None),
        ("0,25", 0.25),
        ("0,500", 0.5),
        ("0,066", 0.066),
    ],  # no thousands group starts with 0
)
def test_read_decimal_accepts_a_decimal_comma(text, expected):
    assert read_decimal(text) == expected


@pytest.mark.parametrize("text", ["1,500", "12,000", "-1,250"])
def test_read_decimal_refuses_a_thousands_or_decimal_comma(text):
    # "1,500 mL" of urine is 1500 mL with a thousands separator, 1.5 mL with a decimal
    # comma: a thousandfold difference, so it is refused with both readings offered
    with pytest.raises(InputError) as err:
        read_decimal(text, field="urine_ml")
    assert "ambiguous" in err.value.message and err.value.field == "urine_ml"
    assert text.replace(",", "") in err.value.fix and text.replace(",", ".") in err.value.fix


@pytest.mark.parametrize("text", ["abc", "nan", "inf", "7.5.1", "1,5,0"])
def test_read_decimal_refuses_what_is_not_a_number(text):
    with pytest.raises(InputError) as err:
        read_decimal(text)
    assert err.value.fix


# Issue 17: "1e٣ g" was read as 1 kg while "٢٠ kg" was refused. One rule: a number is typed
# with the digits 0–9 only; any other script's digits (Arabic-Indic, Devanagari, fullwidth)
# are refused with a message saying so, in weights and in every other number alike.
@pytest.mark.parametrize("text", ["1e٣ g", "٢٠ kg", "2० kg", "２０ kg", "1e\u0663 kg"])
def test_a_weight_with_digits_other_than_0_to_9_is_refused(text):
    with pytest.raises(InputError, match="0–9"):
        parse_weight_kg(text)


@pytest.mark.parametrize("text", ["٢٠", "7,٥", "１２", "1e٣", "1_000"])
def test_a_number_with_digits_other_than_0_to_9_is_refused(text):
    with pytest.raises(InputError, match="0–9"):
        read_decimal(text)


def test_distinct_sorted_matches_numpys_unique_without_importing_masked_arrays():
    """Checked against numpy's own ``np.unique`` (the reference), in a process where the
    helper runs first: numpy's masked arrays stay unloaded."""
    import subprocess
    import sys

    import numpy as np

    from vetfluid.common.arrays import distinct_sorted

    rng = np.random.default_rng(7)
    cases = (np.array([]), np.array([3.0, 1.0, 3.0]), rng.integers(0, 9, 50) / 4.0,
             np.array([-0.0, 0.0, 1e-300]), rng.integers(0, 5, (4, 3)).astype(float))  # fmt: skip
    for values in cases:
        assert np.array_equal(distinct_sorted(values), np.unique(values))
    for broken in (np.array([1.0, np.nan]), np.array([np.inf, 1.0])):
        with pytest.raises(InputError, match="not a finite number"):
            distinct_sorted(broken)
    probe = (
        "import sys, numpy as np; from vetfluid.common.arrays import distinct_sorted; "
        "distinct_sorted(np.array([2.0, 1.0, 2.0])); print('numpy.ma' in sys.modules)"
    )
    out = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True)
    assert out.stdout.strip() == "False", out.stderr


def test_an_hour_off_the_whole_is_said_to_the_minute():
    from vetfluid.common.formatting import hour_text

    assert hour_text(9.0) == "hour 9"
    assert hour_text(9 + 35 / 60) == "hour 9 h 35 min"
    assert hour_text(1 / 6) == "hour 0 h 10 min"
    assert hour_text(23.9999) == "hour 24"  # to the minute, never "hour 23 h 60 min"


@pytest.mark.parametrize(
    ("value", "basis", "text"),
    [(0.0125, "published", "0.0125"),  # a table value keeps every figure on record
     (7503.0, "published", "7503"),
     (0.6, "memory", "0.6"),
     (0.7230769230769231, "derived", "0.723"),  # a puppy's body water at 10 weeks
     (0.7526, "derived", "0.753"),
     (1234.567, "derived", "1235"),
     (0.0, "derived", "0")],
)  # fmt: skip
def test_a_species_value_keeps_its_figures_and_a_worked_out_one_three(value, basis, text):
    # The figures shown are the record's (sources.csv): rounding 0.0125 to 0.013 would put a
    # number on screen that no source gives; a value the program worked out carries no more
    # than about three figures of its inputs (our rule, common practice for derived values).
    from vetfluid.common.formatting import table_value_text

    assert table_value_text(value, basis=basis) == text
