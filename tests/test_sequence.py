"""Reading sequences and the average mass of a chain, checked against handbook values."""

import pytest
from hypothesis import given
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from backbone.constants import Constant
from backbone.errors import BackboneError
from backbone.graph import (
    AMINO_ACIDS,
    ATOMIC_WEIGHT,
    STANDARD_LETTERS,
    formula_counts,
    formula_mass_da,
    parse_sequence,
    residue_mass_da,
)

# Average residue masses [Da] (amino acid minus water), ExPASy "amino acid residue masses" table
# (from memory). They use the older atomic weights (C 12.0107, H 1.00794, ...), which differ from the
# conventional values by well under 0.01 Da per residue.
EXPASY_AVERAGE_RESIDUE_DA = {
    "G": 57.0519,
    "A": 71.0788,
    "S": 87.0782,
    "P": 97.1167,
    "V": 99.1326,
    "T": 101.1051,
    "C": 103.1388,
    "L": 113.1594,
    "I": 113.1594,
    "N": 114.1038,
    "D": 115.0886,
    "Q": 128.1307,
    "K": 128.1741,
    "E": 129.1155,
    "M": 131.1926,
    "H": 137.1411,
    "F": 147.1766,
    "R": 156.1875,
    "Y": 163.1760,
    "W": 186.2132,
}
EXPASY_WATER_DA = 18.01524  # same table (from memory)

# Molecular formulas of the free amino acids, CRC Handbook of Chemistry and Physics, "Properties of amino
# acids" table (common practice).
FREE_AMINO_ACID_FORMULA = {
    "A": "C3H7NO2",
    "R": "C6H14N4O2",
    "N": "C4H8N2O3",
    "D": "C4H7NO4",
    "C": "C3H7NO2S",
    "Q": "C5H10N2O3",
    "E": "C5H9NO4",
    "G": "C2H5NO2",
    "H": "C6H9N3O2",
    "I": "C6H13NO2",
    "L": "C6H13NO2",
    "K": "C6H14N2O2",
    "M": "C5H11NO2S",
    "F": "C9H11NO2",
    "P": "C5H9NO2",
    "S": "C3H7NO3",
    "T": "C4H9NO3",
    "W": "C11H12N2O2",
    "Y": "C9H11NO3",
    "V": "C5H11NO2",
}

# Hen egg-white lysozyme, mature chain (129 residues): Canfield, J. Biol. Chem. 238, 2698 (1963);
# UniProt P00698 residues 19-147 (from memory). Average mass about 14.3 kDa (common practice); ExPASy
# ProtParam gives 14313 Da for the chain with free cysteines (from memory).
HEWL = (
    "KVFGRCELAAAMKRHGLDNYRGYSLGNWVCAAKFESNFNTQATNRNTDGSTDYGILQINSRWWCNDGRTPGSRNLCNIPCSALLSSDITASVNCAKKIVSD"
    "GNGMNAWVAWRNRCKGTDVQAWIRGCRL"
)


# ---------------------------------------------------------------------------------------------------------
# parse_sequence
# ---------------------------------------------------------------------------------------------------------


def test_plain_sequence_ignores_whitespace_digits_and_case():
    text = "  1 mkvl Aagt\n 11 WYhp\r\n\tq  "
    assert parse_sequence(text) == "MKVLAAGTWYHPQ"


def test_standard_letters_are_the_twenty_iupac_codes():
    # IUPAC-IUB one-letter codes of the 20 standard amino acids (common practice).
    assert STANDARD_LETTERS == "ACDEFGHIKLMNPQRSTVWY"
    assert parse_sequence(STANDARD_LETTERS.lower()) == STANDARD_LETTERS


def test_fasta_single_record():
    text = ">sp|invented|demo protein of a model lab\nMKT AYIAK\nQRQISFVK\n\n"
    assert parse_sequence(text) == "MKTAYIAKQRQISFVK"


def test_fasta_several_header_lines_and_blank_lines_before():
    text = "\n\n>first header line\n>second header line\n\nGSHM\nAEV*\n"
    assert parse_sequence(text) == "GSHMAEV"


def test_trailing_stop_marker_is_dropped():
    assert parse_sequence("MKV*") == "MKV"
    assert parse_sequence("MKV * \n") == "MKV"


@given(st.text(alphabet=STANDARD_LETTERS + STANDARD_LETTERS.lower() + " \n\t0123456789", min_size=1))
def test_plain_text_round_trip(text):
    letters = "".join(ch.upper() for ch in text if ch.isalpha())
    if letters:
        assert parse_sequence(text) == letters
        assert parse_sequence(letters) == letters
    else:
        with pytest.raises(BackboneError, match="empty"):
            parse_sequence(text)


def test_unknown_letter_names_letter_position_and_allowed():
    with pytest.raises(BackboneError, match=r"letter 'X' at residue 4 \(line 1, column 4\).*ACDEFGHIKLMNPQRSTVWY"):
        parse_sequence("MKVXL")


def test_unknown_letter_position_counts_residues_not_characters():
    with pytest.raises(BackboneError, match=r"^my file: letter 'b' at residue 6 \(line 3, column 4\)"):
        parse_sequence(">h\nMK VL\n1 Ab", where="my file")


def test_non_standard_codes_get_a_hint():
    with pytest.raises(BackboneError, match="not modeled"):
        parse_sequence("MKU")


def test_non_letter_character():
    with pytest.raises(BackboneError, match=r"character '-' at residue 3"):
        parse_sequence("MK-V")


def test_stop_marker_inside_sequence():
    with pytest.raises(BackboneError, match=r"character '\*' at residue 3 \(line 1, column 3\)"):
        parse_sequence("MK*V")


def test_empty_sequence():
    with pytest.raises(BackboneError, match="empty"):
        parse_sequence("")
    with pytest.raises(BackboneError, match="empty"):
        parse_sequence("  12 \n ")
    with pytest.raises(BackboneError, match="empty"):
        parse_sequence(">header only\n")
    with pytest.raises(BackboneError, match="empty"):
        parse_sequence("*")


def test_fasta_two_records():
    with pytest.raises(BackboneError, match="second FASTA record starts at line 3; exactly one"):
        parse_sequence(">a\nMKV\n>b\nGSH\n")


def test_fasta_text_before_header():
    with pytest.raises(BackboneError, match="line 1 holds text before the FASTA header"):
        parse_sequence("MKV\n>a\nGSH\n")


def test_not_text():
    with pytest.raises(BackboneError, match="expected the sequence as text, got list"):
        parse_sequence(["M", "K"])


# ---------------------------------------------------------------------------------------------------------
# atomic weights, formulas, masses
# ---------------------------------------------------------------------------------------------------------

# CIAAW intervals of the standard atomic weights (Meija et al., Pure Appl. Chem. 88, 265, 2016, Table 1,
# from memory). A conventional value is the interval rounded to a few digits, so it lies within one unit of
# its last digit of the interval (O: 15.999 against [15.99903, 15.99977]).
CIAAW_INTERVAL = {
    "H": (1.00784, 1.00811, 0.001),
    "C": (12.0096, 12.0116, 0.001),
    "N": (14.00643, 14.00728, 0.001),
    "O": (15.99903, 15.99977, 0.001),
    "S": (32.059, 32.076, 0.01),
}


@pytest.mark.parametrize("element", sorted(CIAAW_INTERVAL))
def test_atomic_weights_match_ciaaw_interval(element):
    w = ATOMIC_WEIGHT[element]
    assert isinstance(w, Constant) and w.unit == "Da" and "CIAAW" in w.reference
    lo, hi, last_digit = CIAAW_INTERVAL[element]
    assert lo - last_digit <= w.value <= hi + last_digit


@pytest.mark.parametrize("aa", sorted(FREE_AMINO_ACID_FORMULA))
def test_residue_formula_plus_water_is_the_free_amino_acid(aa):
    residue = formula_counts(AMINO_ACIDS[aa].residue_formula)
    expected = formula_counts(FREE_AMINO_ACID_FORMULA[aa])
    residue["H"] += 2
    residue["O"] += 1
    assert residue == expected


@pytest.mark.parametrize("aa", sorted(EXPASY_AVERAGE_RESIDUE_DA))
def test_residue_mass_against_expasy(aa):
    # adding one residue to a chain adds exactly one residue mass
    added = residue_mass_da(aa * 3) - residue_mass_da(aa * 2)
    assert_allclose(added, EXPASY_AVERAGE_RESIDUE_DA[aa], atol=0.01)
    assert_allclose(residue_mass_da(aa), EXPASY_AVERAGE_RESIDUE_DA[aa] + EXPASY_WATER_DA, atol=0.01)


def test_water_mass():
    # molar mass of water 18.015 g/mol (CRC Handbook, common practice)
    assert_allclose(formula_mass_da("H2O"), 18.015, atol=0.001)


def test_lysozyme_mass():
    assert len(HEWL) == 129
    mass = residue_mass_da(HEWL)
    table_sum = sum(EXPASY_AVERAGE_RESIDUE_DA[aa] for aa in HEWL) + EXPASY_WATER_DA
    assert_allclose(mass, table_sum, atol=0.6)  # 129 residues x < 0.005 Da atomic-weight difference
    assert_allclose(mass, 14313.0, atol=2.0)  # ExPASy ProtParam (from memory)
    assert_allclose(mass, 14.3e3, rtol=0.005)  # about 14.3 kDa (common practice)


def test_mass_accepts_fasta_and_rejects_bad_sequence():
    assert_allclose(residue_mass_da(">demo\nGG\nG\n"), residue_mass_da("GGG"), rtol=1e-15)
    with pytest.raises(BackboneError, match=r"^residue_mass_da: letter 'Z'"):
        residue_mass_da("GZG")


def test_formula_errors():
    with pytest.raises(BackboneError, match="not a plain element formula"):
        formula_counts("C6(H2)")
    with pytest.raises(BackboneError, match="not a plain element formula"):
        formula_counts("")
    with pytest.raises(BackboneError, match=r"element 'Se' has no atomic weight here"):
        formula_counts("C3H5NOSe")
