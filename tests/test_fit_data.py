"""Reading and validating measured relaxation data, and the statuses bad data lead to.

Checks here are against the file contents written in each test (what the user wrote must come back, with
the line and column of every problem named) and against the ``backbone fit --json`` contract of
/work/shared/ARCHITECTURE.md. The NMR-STAR file is written with pynmrstar itself (tag names of the NMR-STAR 3
dictionary shipped with pynmrstar) for an invented protein.
"""

import json
import math

import numpy as np
import pandas as pd
import pynmrstar
import pytest
from numpy.testing import assert_allclose

from backbone.errors import BackboneError
from backbone.fitting.data import (
    FLAG_DUPLICATE_DELAY,
    FLAG_INTENSITY_MISSING,
    FLAG_NEGATIVE_DELAY,
    FLAG_NONPOSITIVE_INTENSITY,
    decays_from_frame,
    rates_from_frame,
    read_decays,
    read_nmrstar,
    read_rates,
)
from backbone.fitting.series import STATUSES, fit_decays

ROWS = [
    ("G12", 0.01, 1000.0, 10.0),
    ("G12", 0.05, 800.0, 10.0),
    ("G12", 0.10, 600.0, 10.0),
    ("A13", 0.01, 2000.0, 20.0),
    ("A13", 0.05, 1500.0, 20.0),
]


def _write(tmp_path, text, name="data.csv"):
    path = tmp_path / name
    path.write_text(text)
    return path


# ---------------------------------------------------------------------------------------------------------
# decay tables
# ---------------------------------------------------------------------------------------------------------
@pytest.mark.parametrize("sep", [",", "\t", ";", "   "], ids=["comma", "tab", "semicolon", "whitespace"])
def test_every_delimiter_reads_the_same_points(tmp_path, sep):
    lines = [sep.join(["residue", "delay_s", "intensity", "error"])]
    lines += [sep.join(str(v) for v in row) for row in ROWS]
    data = read_decays(_write(tmp_path, "\n".join(lines) + "\n"))
    assert data.points["residue"].tolist() == [r[0] for r in ROWS]
    assert_allclose(data.points["delay_s"], [r[1] for r in ROWS], rtol=0)
    assert_allclose(data.points["intensity"], [r[2] for r in ROWS], rtol=0)
    assert_allclose(data.points["error"], [r[3] for r in ROWS], rtol=0)
    assert data.has_errors and not data.has_series
    assert data.points["line"].tolist() == [2, 3, 4, 5, 6]
    assert (data.points["flag"] == "").all()


def test_comments_blank_lines_case_and_delay_in_ms(tmp_path):
    text = (
        "# invented lab, protein 'Examplin'\n\nResidue,Delay_ms,Intensity,Series\n"
        "12,10,1000,R1\n\n12,50,700,R1\n12,10,900,R2\n"
    )
    data = read_decays(_write(tmp_path, text))
    # 10 ms = 0.010 s (SI inside, conversion at the edge).
    assert_allclose(data.points["delay_s"], [0.010, 0.050, 0.010], rtol=1e-15)
    assert data.points["residue"].tolist() == [12, 12, 12]
    assert isinstance(data.points["residue"].iloc[0], int)
    assert data.points["series"].tolist() == ["R1", "R1", "R2"]
    assert data.points["line"].tolist() == [4, 6, 7]
    assert data.has_series and not data.has_errors
    assert (data.points["flag"] == "").all()  # the same delay in two series is not a duplicate


def test_residue_identifiers_kept_as_given(tmp_path):
    data = read_decays(_write(tmp_path, "residue,delay_s,intensity\nG12,0.01,5\n13,0.02,4\n"))
    assert data.points["residue"].tolist() == ["G12", "13"]


def test_unusable_points_are_kept_and_flagged(tmp_path):
    text = "\n".join(
        [
            "residue,delay_s,intensity",
            "5,0.01,nan",
            "5,-0.01,100",
            "5,0.02,0",
            "5,0.03,-4",
            "5,0.04,90",
            "5,0.04,91",
            "5,0.05,",
        ]
    )
    data = read_decays(_write(tmp_path, text))
    assert len(data.points) == 7
    assert data.points["flag"].tolist() == [
        FLAG_INTENSITY_MISSING,
        FLAG_NEGATIVE_DELAY,
        FLAG_NONPOSITIVE_INTENSITY,
        FLAG_NONPOSITIVE_INTENSITY,
        FLAG_DUPLICATE_DELAY,
        FLAG_DUPLICATE_DELAY,
        FLAG_INTENSITY_MISSING,
    ]
    problems = data.problems()
    assert len(problems) == 7
    assert problems[0].startswith(f"{tmp_path / 'data.csv'} line 2 (residue 5")


def test_error_column_cells_are_checked(tmp_path):
    data = read_decays(
        _write(tmp_path, "residue,delay_s,intensity,error\n1,0.01,5,0\n1,0.02,4,\n1,0.03,3,1\n")
    )
    assert data.points["flag"].tolist() == ["non-positive error", "error missing", ""]


@pytest.mark.parametrize(
    "text,fragments",
    [
        ("", ["data.csv", "empty"]),
        ("\n# only a comment\n\n", ["data.csv", "empty"]),
        ("residue,delay_s,intensity\n", ["data.csv", "only a header"]),
        ("residue,delay_s,intensity\n1,0.01,5\n1,0.02,abc\n", ["data.csv", "line 3", "'intensity'", "'abc'"]),
        ("residue,delay_s,intensity\n1,1e-3x,5\n", ["line 2", "'delay_s'", "'1e-3x'"]),
        ("residue;delay_s;intensity\n1;0,05;5\n", ["line 2", "'delay_s'", "'0,05'", "decimals with a point"]),
        (
            "residue,delay_s,height\n1,0.01,5\n",
            ["line 1", "unknown column 'height'", "allowed columns", "intensity"],
        ),
        ("residue,delay_s\n1,0.01\n", ["missing column 'intensity'"]),
        ("residue,intensity\n1,5\n", ["missing column 'delay_s'"]),
        ("residue,delay_s,delay_ms,intensity\n1,0.01,10,5\n", ["delay_s or delay_ms"]),
        ("residue,delay_s,intensity,residue\n1,0.01,5,1\n", ["'residue' appears twice"]),
        ("residue,delay_s,intensity\n1,0.01,5,7\n", ["line 2", "4 fields", "3 columns"]),
        ("1,0.01,5\n1,0.02,4\n", ["line 1", "header"]),
        ("residue,delay_s,intensity\n,0.01,5\n", ["empty residue", "line 2"]),
    ],
    ids=[
        "empty",
        "comments-only",
        "header-only",
        "non-numeric",
        "non-numeric-delay",
        "decimal-comma",
        "unknown-column",
        "missing-intensity",
        "missing-delay",
        "two-delays",
        "duplicate-column",
        "field-count",
        "no-header",
        "empty-residue",
    ],
)
def test_file_errors_name_file_line_and_column(tmp_path, text, fragments):
    path = _write(tmp_path, text)
    with pytest.raises(BackboneError) as info:
        read_decays(path)
    message = str(info.value)
    assert "\n" not in message  # one clear line
    for fragment in fragments:
        assert fragment in message


def test_missing_file_and_non_text_file(tmp_path):
    with pytest.raises(BackboneError, match="no such file"):
        read_decays(tmp_path / "absent.csv")
    binary = tmp_path / "binary.csv"
    binary.write_bytes(b"\xff\xfe\x00\x81residue")
    with pytest.raises(BackboneError, match="not a UTF-8 text file"):
        read_decays(binary)


def test_frame_input_is_validated_too():
    frame = pd.DataFrame({"Residue": [1, 1], "delay_s": [0.0, 0.1], "intensity": [1.0, "x"]})
    with pytest.raises(BackboneError, match=r"row 2, column 'intensity': 'x'"):
        decays_from_frame(frame)
    with pytest.raises(BackboneError, match="unknown column 'height'"):
        decays_from_frame(pd.DataFrame({"residue": [1], "delay_s": [0.0], "height": [1.0]}))
    with pytest.raises(BackboneError, match="no data rows"):
        decays_from_frame(pd.DataFrame(columns=["residue", "delay_s", "intensity"]))
    with pytest.raises(BackboneError, match="expected a pandas DataFrame"):
        decays_from_frame([1, 2, 3])


# ---------------------------------------------------------------------------------------------------------
# statuses from bad data
# ---------------------------------------------------------------------------------------------------------
def _decay_rows(residue, delays, rate=10.0, amplitude=1000.0):
    # Noise-free A exp(-R t): the expected values are written out with math.exp.
    return [(residue, t, amplitude * math.exp(-rate * t)) for t in delays]


DELAYS = [0.0, 0.02, 0.04, 0.06, 0.08, 0.10]


def _status_table(rows, **kwargs):
    frame = pd.DataFrame(rows, columns=["residue", "delay_s", "intensity"])
    return fit_decays(frame, **kwargs)


def test_statuses_for_bad_data():
    rows = []
    rows += _decay_rows("good", DELAYS)
    nan_rows = _decay_rows("nan", DELAYS)
    nan_rows[2] = ("nan", DELAYS[2], float("nan"))
    rows += nan_rows
    neg_rows = _decay_rows("negative", DELAYS)
    neg_rows[1] = ("negative", DELAYS[1], -5.0)
    neg_rows[3] = ("negative", DELAYS[3], 0.0)
    rows += neg_rows
    rows += [("single", 0.01, 500.0)]
    rows += [("two", 0.01, 500.0), ("two", 0.05, 300.0)]
    rows += [("dup", 0.01, 500.0), ("dup", 0.01, 510.0), ("dup", 0.05, 300.0), ("dup", 0.09, 200.0)]
    rows += [("flat", t, 250.0) for t in DELAYS]
    rows += [
        ("mostly-bad", 0.01, float("nan")),
        ("mostly-bad", 0.02, -1.0),
        ("mostly-bad", 0.03, 5.0),
        ("mostly-bad", 0.04, 4.0),
    ]
    result = _status_table(rows)
    table = result.table.set_index("residue")
    assert list(result.table["residue"]) == [
        "good",
        "nan",
        "negative",
        "single",
        "two",
        "dup",
        "flat",
        "mostly-bad",
    ]

    assert table.loc["good", "status"] == "ok"
    assert_allclose(table.loc["good", "rate"], 10.0, rtol=1e-9)
    # Excluded points: the fit runs on the rest and the reason names them.
    assert table.loc["nan", "status"] == "ok"
    assert table.loc["nan", "n_points"] == 5 and table.loc["nan", "n_excluded"] == 1
    assert (
        "1 point excluded" in table.loc["nan", "reason"] and "intensity missing" in table.loc["nan", "reason"]
    )
    assert_allclose(table.loc["nan", "rate"], 10.0, rtol=1e-9)
    assert table.loc["negative", "status"] == "ok"
    assert "2 points excluded" in table.loc["negative", "reason"]
    assert "non-positive intensity" in table.loc["negative", "reason"]
    # Too few points, with and without excluded ones.
    assert table.loc["single", "status"] == "too-few-points"
    assert table.loc["two", "status"] == "too-few-points"
    assert "needs at least 3" in table.loc["two", "reason"]
    assert table.loc["dup", "status"] == "bad-data"
    assert "duplicate delay" in table.loc["dup", "reason"]
    assert table.loc["mostly-bad", "status"] == "bad-data"
    # A constant series has no decay.
    assert table.loc["flat", "status"] == "failed"
    assert "constant" in table.loc["flat", "reason"]
    assert math.isnan(table.loc["flat", "rate"])
    assert result.global_info["status_counts"]["bad-data"] == 2
    assert result.global_info["n_points_excluded"] == 2 + 1 + 2 + 2


def test_nonpositive_points_are_kept_for_models_through_zero():
    # Saturation recovery starts at zero: a zero (or slightly negative) first point is data, not an error.
    rows = [("r", t, 800.0 * (1 - math.exp(-2.0 * t))) for t in [0.0, 0.1, 0.3, 0.6, 1.0, 1.5, 2.5]]
    result = _status_table(rows, model="recovery")
    row = result.table.iloc[0]
    assert row["status"] == "ok" and row["n_points"] == 7 and row["n_excluded"] == 0
    assert_allclose([row["plateau"], row["rate"]], [800.0, 2.0], rtol=1e-9)


def test_pure_noise_series_is_poorly_determined():
    rng = np.random.default_rng(7)  # seeded fixture
    rows = [("noise", t, 100.0 + rng.normal(0.0, 5.0)) for t in np.linspace(0.01, 0.02, 8)]
    row = _status_table(rows).table.iloc[0]
    assert row["status"] == "poorly-determined"
    assert "relative error of rate" in row["reason"]


def test_series_are_fitted_separately(tmp_path):
    lines = ["residue,delay_s,intensity,series"]
    for series, rate in (("600MHz", 10.0), ("800MHz", 14.0)):
        lines += [f"G12,{t},{1000.0 * math.exp(-rate * t)!r},{series}" for t in DELAYS]
    result = fit_decays(_write(tmp_path, "\n".join(lines)))
    assert result.table["series"].tolist() == ["600MHz", "800MHz"]
    assert_allclose(result.table["rate"], [10.0, 14.0], rtol=1e-9)
    assert [r["series"] for r in result.as_dict()["residues"]] == ["600MHz", "800MHz"]


def test_as_dict_follows_the_fit_json_contract():
    rows = _decay_rows(7, DELAYS) + [(8, 0.01, 5.0)] + [("G9", t, 3.0) for t in DELAYS]
    result = _status_table(rows)
    out = result.as_dict()
    text = json.dumps(out, allow_nan=False)  # NaN written as null, so strict JSON
    back = json.loads(text)
    assert set(back) == {"model", "residues", "global"}
    assert back["model"] == "decay"
    assert [r["residue"] for r in back["residues"]] == [7, 8, "G9"]  # every input residue, ids as given
    for residue in back["residues"]:
        assert residue["status"] in STATUSES
        for key in ("residue", "status", "reason", "amplitude", "amplitude_err", "rate", "rate_err"):
            assert key in residue
    assert back["residues"][1]["rate"] is None
    assert back["global"]["n_residues"] == 3


# ---------------------------------------------------------------------------------------------------------
# rate tables
# ---------------------------------------------------------------------------------------------------------
def test_rate_table(tmp_path):
    text = (
        "residue;R1;R2;NOE;R1_err;R2_err;NOE_err\n"
        "M1;1.60;11.8;0.80;0.02;0.3;0.03\n"
        "K2;1.55;;0.78;0.02;;0.03\n"
        "K2;-1;12.0;-0.4;0.02;0;0.03\n"
    )
    rates = read_rates(_write(tmp_path, text, "rates.csv"))
    table = rates.table
    assert table["residue"].tolist() == ["M1", "K2", "K2"]
    assert_allclose(table["R2"].iloc[0], 11.8, rtol=0)
    assert math.isnan(table["R2"].iloc[1])
    assert table["flag"].iloc[0] == ""
    assert "R2 missing" in table["flag"].iloc[1]
    assert "negative R1" in table["flag"].iloc[2] and "non-positive R2_err" in table["flag"].iloc[2]
    assert "residue listed more than once" in table["flag"].iloc[2]
    assert "negative NOE" not in table["flag"].iloc[2]  # heteronuclear NOEs may be negative
    assert len(rates.problems()) == 2


@pytest.mark.parametrize(
    "text,fragment",
    [
        ("residue,R1\n1,1.5\n", "missing column 'R2'"),
        ("residue,R1,R2,NOE_err\n1,1.5,10,0.1\n", "'NOE_err' given without column 'NOE'"),
        ("residue,R1,R2,T1\n1,1.5,10,0.6\n", "unknown column 'T1'"),
        ("residue,R1,R2\n1,fast,10\n", "line 2, column 'R1': 'fast'"),
        ("residue,R1,R2\n", "only a header"),
    ],
)
def test_rate_table_errors(tmp_path, text, fragment):
    with pytest.raises(BackboneError, match=fragment):
        read_rates(_write(tmp_path, text, "rates.csv"))


# ---------------------------------------------------------------------------------------------------------
# NMR-STAR
# ---------------------------------------------------------------------------------------------------------
# Invented protein "Examplin", residues 2-4 (SER, LYS, GLY).
RESIDUES = [(2, "SER"), (3, "LYS"), (4, "GLY")]
T1_S = [0.612, 0.598, 0.655]  # T1 in s
T1_ERR_S = [0.010, 0.012, 0.015]
R2 = [11.9, 12.4, 9.8]  # R2 in s-1
R2_ERR = [0.3, 0.4, 0.5]
NOE = [0.79, 0.81, 0.55]
NOE_ERR = [0.02, 0.02, 0.04]


def _relaxation_frame(category, prefix, name, field, units_tag, units, loop_category, value_tags, values):
    frame = pynmrstar.Saveframe.from_scratch(name, prefix)
    frame.add_tag("Sf_category", category)
    frame.add_tag("Sf_framecode", name)
    frame.add_tag("Spectrometer_frequency_1H", field)
    if units_tag:
        frame.add_tag(units_tag, units)
    loop = pynmrstar.Loop.from_scratch(loop_category)
    if loop_category == "_Heteronucl_NOE":
        tags = [
            "ID",
            "Entity_assembly_ID_1",
            "Comp_index_ID_1",
            "Comp_ID_1",
            "Atom_ID_1",
            "Entity_assembly_ID_2",
            "Comp_index_ID_2",
            "Comp_ID_2",
            "Atom_ID_2",
        ] + value_tags
        loop.add_tag(tags)
        for i, ((index, comp), (v, e)) in enumerate(zip(RESIDUES, values), start=1):
            loop.add_data([i, 1, index, comp, "H", 1, index, comp, "N", v, e])
    else:
        loop.add_tag(["ID", "Entity_assembly_ID", "Comp_index_ID", "Comp_ID", "Atom_ID"] + value_tags)
        for i, ((index, comp), (v, e)) in enumerate(zip(RESIDUES, values), start=1):
            loop.add_data([i, 1, index, comp, "N", v, e])
    frame.add_loop(loop)
    return frame


def _star_entry(fields=(600.13, 600.13, 600.13), t1_units="s"):
    entry = pynmrstar.Entry.from_scratch("examplin_relaxation")
    entry.add_saveframe(
        _relaxation_frame(
            "heteronucl_T1_relaxation",
            "_Heteronucl_T1_list",
            "examplin_T1",
            fields[0],
            "T1_val_units",
            t1_units,
            "_T1",
            ["Val", "Val_err"],
            list(zip(T1_S, T1_ERR_S)),
        )
    )
    entry.add_saveframe(
        _relaxation_frame(
            "heteronucl_T2_relaxation",
            "_Heteronucl_T2_list",
            "examplin_T2",
            fields[1],
            "T2_val_units",
            "s-1",
            "_T2",
            ["T2_val", "T2_val_err"],
            list(zip(R2, R2_ERR)),
        )
    )
    entry.add_saveframe(
        _relaxation_frame(
            "heteronucl_NOEs",
            "_Heteronucl_NOE_list",
            "examplin_NOE",
            fields[2],
            None,
            None,
            "_Heteronucl_NOE",
            ["Val", "Val_err"],
            list(zip(NOE, NOE_ERR)),
        )
    )
    return entry


def test_nmrstar_round_trip(tmp_path):
    path = tmp_path / "examplin.str"
    _star_entry().write_to_file(str(path))
    rates = read_nmrstar(path)
    table = rates.table
    assert table["residue"].tolist() == [2, 3, 4]
    assert table["residue_name"].tolist() == ["SER", "LYS", "GLY"]
    # R1 = 1/T1 and σ_R1 = σ_T1 / T1² (first-order propagation).
    assert_allclose(table["R1"], [1 / t for t in T1_S], rtol=1e-12)
    assert_allclose(table["R1_err"], [e / t**2 for t, e in zip(T1_S, T1_ERR_S)], rtol=1e-12)
    assert_allclose(table["R2"], R2, rtol=1e-12)
    assert_allclose(table["R2_err"], R2_ERR, rtol=1e-12)
    assert_allclose(table["NOE"], NOE, rtol=1e-12)
    assert_allclose(table["NOE_err"], NOE_ERR, rtol=1e-12)
    assert (table["flag"] == "").all()
    assert rates.field_mhz == pytest.approx(600.13)


def test_nmrstar_saveframes_without_data_block(tmp_path):
    path = tmp_path / "frames.str"
    path.write_text("\n".join(str(frame) for frame in _star_entry().frame_list))
    assert_allclose(read_nmrstar(path).table["R2"], R2, rtol=1e-12)


def test_nmrstar_rates_in_ms_units(tmp_path):
    path = tmp_path / "examplin.str"
    _star_entry(t1_units="ms").write_to_file(str(path))
    table = read_nmrstar(path).table
    assert_allclose(table["R1"], [1 / (t * 1e-3) for t in T1_S], rtol=1e-12)


def test_nmrstar_several_fields(tmp_path):
    path = tmp_path / "examplin.str"
    _star_entry(fields=(600.13, 800.23, 600.13)).write_to_file(str(path))
    with pytest.raises(BackboneError, match=r"several fields \(600.13, 800.23 MHz\)"):
        read_nmrstar(path)
    table = read_nmrstar(path, field_mhz=600).table
    assert "R1" in table and "NOE" in table
    assert table["R2"].isna().all()  # the only R2 list is at 800 MHz
    with pytest.raises(BackboneError, match="no relaxation list at 500 MHz"):
        read_nmrstar(path, field_mhz=500)


@pytest.mark.parametrize(
    "content,fragment",
    [
        (None, "unknown units"),
        ("", "empty"),
        ("this is not NMR-STAR\n", "not a readable NMR-STAR file"),
        (
            "data_nothing\n\nsave_frame\n_Entry.Sf_category entry_information\nsave_\n",
            "no relaxation saveframes",
        ),
    ],
)
def test_nmrstar_errors(tmp_path, content, fragment):
    path = tmp_path / "bad.str"
    if content is None:
        _star_entry(t1_units="minutes").write_to_file(str(path))
        fragment = "T1_val_units is 'minutes'; allowed: s, ms, s-1, ms-1"
    else:
        path.write_text(content)
    with pytest.raises(BackboneError) as info:
        read_nmrstar(path)
    assert fragment in str(info.value)
    with pytest.raises(BackboneError, match="no such file"):
        read_nmrstar(tmp_path / "absent.str")


def _write_entry(tmp_path, entry):
    path = tmp_path / "examplin.str"
    entry.write_to_file(str(path))
    return path


def test_nmrstar_two_lists_of_one_quantity(tmp_path):
    entry = _star_entry()
    category, prefix, name = "heteronucl_T2_relaxation", "_Heteronucl_T2_list", "examplin_T2_repeat"
    values = list(zip(R2, R2_ERR))
    second = _relaxation_frame(
        category, prefix, name, 600.13, "T2_val_units", "s-1", "_T2", ["T2_val", "T2_val_err"], values
    )
    entry.add_saveframe(second)
    with pytest.raises(BackboneError, match="two R2 lists for the same field .*'examplin_T2_repeat'"):
        read_nmrstar(_write_entry(tmp_path, entry))


def test_nmrstar_loop_problems(tmp_path):
    entry = _star_entry()
    frame = entry.get_saveframe_by_name("examplin_T1")
    frame.remove_loop("_T1")
    with pytest.raises(BackboneError, match="saveframe 'examplin_T1' has no _T1 loop"):
        read_nmrstar(_write_entry(tmp_path, entry))

    entry = _star_entry()
    loop = entry.get_saveframe_by_name("examplin_T2").get_loop("_T2")
    loop.remove_tag("Atom_ID")
    with pytest.raises(BackboneError, match="loop _T2 lacks the tag _T2.Atom_ID"):
        read_nmrstar(_write_entry(tmp_path, entry))

    entry = _star_entry()
    loop = entry.get_saveframe_by_name("examplin_NOE").get_loop("_Heteronucl_NOE")
    loop.data[1][loop.tag_index("Val")] = "high"
    with pytest.raises(BackboneError, match="saveframe 'examplin_NOE', loop _Heteronucl_NOE row 2"):
        read_nmrstar(_write_entry(tmp_path, entry))


def test_frame_inputs_errors():
    with pytest.raises(BackboneError, match="column 'Delay_S' appears twice"):
        decays_from_frame(
            pd.DataFrame([[1, 0.1, 0.1, 5.0]], columns=["residue", "delay_s", "Delay_S", "intensity"])
        )
    with pytest.raises(BackboneError, match="unknown column 'T2'; allowed columns: residue, R1, R2"):
        rates_from_frame(pd.DataFrame({"residue": [1], "R1": [1.0], "T2": [0.1]}))
    with pytest.raises(BackboneError, match="no data rows"):
        rates_from_frame(pd.DataFrame(columns=["residue", "R1", "R2"]))
    ok = rates_from_frame(pd.DataFrame({"residue": [1, 2], "r1": [1.5, 1.6], "R2": [10.0, 11.0]}))
    assert ok.table["R1"].tolist() == [1.5, 1.6]


def test_nmrstar_tags_exist_in_the_dictionary(tmp_path):
    # The NMR-STAR 3 dictionary bundled with pynmrstar (BMRB) is the external reference for the tag and
    # saveframe-category names the file above is written with, and thus for what the reader expects.
    schema = pynmrstar.Schema().schema
    entry = _star_entry()
    for frame in entry.frame_list:
        for tag_name in frame.tag_dict:
            assert f"{frame.tag_prefix}.{tag_name}".lower() in schema
        category = frame.get_tag("Sf_category")[0]
        assert schema[f"{frame.tag_prefix}.sf_category".lower()]["SFCategory"] == category
        for loop in frame.loops:
            for tag_name in loop.tags:
                assert f"{loop.category}.{tag_name}".lower() in schema
