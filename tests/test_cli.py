"""The command-line front end: the JSON contract of `backbone rates`, readable tables, and bad input
ending as one line on stderr with exit status 2 (never a traceback)."""

import json
import subprocess
import sys
from pathlib import Path

import pytest
from numpy.testing import assert_allclose

from backbone.cli import main

SCENARIOS = Path(__file__).resolve().parent.parent / "scenarios"


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_rates_json_contract(capsys):
    # ARCHITECTURE.md contract: conditions {tau_c_ns, field_mhz, labeling, temperature_k, ...} and
    # rates {H: {R1, R2, R2_trosy, eta_xy}, N: {...}, CA: {R1, R2}, HA, C, CB}.
    code, out, err = run(capsys, "rates", "--tau-c", "15", "--field", "800", "--labeling", "13c15n", "--json")
    assert code == 0 and err == ""
    doc = json.loads(out)
    for key in ("tau_c_ns", "field_mhz", "labeling", "temperature_k", "tau_c_source"):
        assert key in doc["conditions"]
    assert doc["conditions"]["tau_c_source"] == "given"
    assert_allclose(doc["conditions"]["tau_c_ns"], 15.0)
    assert set(doc["rates"]) == {"H", "N", "CA", "HA", "C", "CB"}
    for nucleus in ("H", "N"):
        assert {"R1", "R2", "R2_trosy", "eta_xy"} <= set(doc["rates"][nucleus])
    for nucleus in ("CA", "HA", "C", "CB"):
        assert {"R1", "R2"} <= set(doc["rates"][nucleus])


def test_rates_15n_scheme_reports_unlabeled_carbons(capsys):
    # 13C at natural abundance (1.07 %, Harris et al., Pure Appl. Chem. 73, 1795, 2001) is reported as not
    # labeled, never given rates as if labeled.
    code, out, _ = run(capsys, "rates", "--tau-c", "8", "--labeling", "15n", "--json")
    doc = json.loads(out)
    assert code == 0
    assert not {"CA", "C", "CB"} & set(doc["rates"])
    assert_allclose(doc["unlabeled"]["CA"], 0.0107, rtol=1e-6)


def test_rates_from_sequence_says_estimated(capsys):
    code, out, _ = run(capsys, "rates", "--sequence", str(SCENARIOS / "hydrolase.fasta"), "--temperature", "25", "--json")
    doc = json.loads(out)
    assert code == 0
    assert doc["conditions"]["tau_c_source"].startswith("estimated from")
    # Rule of thumb 0.5-0.6 ns per kDa at 25 C in water (common practice): a 35 kDa protein near 17-21 ns.
    assert 0.7 * 0.6 * 35 < doc["conditions"]["tau_c_ns"] < 1.3 * 0.6 * 35


def test_rates_field_as_b0(capsys):
    # nu_H = gamma_p B0 / 2 pi with CODATA gamma_p (scipy.constants): 18.7893 T is the 800 MHz magnet.
    from math import pi

    from scipy.constants import physical_constants

    b0 = 2 * pi * 800e6 / physical_constants["proton gyromag. ratio"][0]
    _, out, _ = run(capsys, "rates", "--tau-c", "10", "--b0", f"{b0:.6f}", "--json")
    assert_allclose(json.loads(out)["conditions"]["field_mhz"], 800.0, rtol=1e-6)


def test_rates_table_is_readable(capsys):
    code, out, _ = run(capsys, "rates", "--mass", "20", "--labeling", "2h13c15n")
    assert code == 0
    assert "15N (amide)" in out and "R2_trosy" in out and "estimated from" in out


def test_labelings_lists_every_bundled_scheme(capsys):
    from backbone.labeling import registered_schemes

    code, out, _ = run(capsys, "labelings")
    assert code == 0
    for sid in registered_schemes():
        assert sid in out


@pytest.mark.parametrize(
    "argv, fragment",
    [
        (["rates", "--tau-c", "0"], "tau_c"),
        (["rates", "--tau-c", "-3"], "tau_c"),
        (["rates", "--tau-c", "900"], "tau_c"),
        (["rates", "--tau-c", "10", "--field", "50"], "field"),
        (["rates", "--tau-c", "10", "--labeling", "13c15x"], "13c15x"),
        (["rates", "--tau-c", "10", "--temperature", "95"], "temperature"),
        (["rates", "--tau-c", "10", "--temperature", "warm"], "temperature"),
        (["rates", "--tau-c", "10", "--s2", "1.5"], "S2"),
        (["rates", "--tau-c", "10", "--b0", "-2"], "b0"),
        (["rates", "--sequence", "/nonexistent/seq.fasta"], "seq.fasta"),
        (["rates", "--mass", "-5"], "mass"),
        (["rates"], "tau_c"),
        (["rates", "--tau-c", "abc"], "tau-c"),
        (["nonsense"], "nonsense"),
    ],
)
def test_bad_input_is_one_line_and_exit_2(capsys, argv, fragment):
    with pytest.raises(SystemExit) if argv[0] == "nonsense" or "abc" in argv else _no_raise() as exc:
        code = main(argv)
    if exc is not None and getattr(exc, "value", None) is not None:
        code = exc.value.code
    out, err = capsys.readouterr()
    assert code == 2
    assert out == ""
    assert err.count("\n") == 1 and "Traceback" not in err
    assert fragment.lower() in err.lower()


def test_unknown_residue_letter_in_sequence_file(tmp_path, capsys):
    f = tmp_path / "bad.fasta"
    f.write_text(">invented test peptide\nMKTAYZ\n")
    code, out, err = run(capsys, "rates", "--sequence", str(f))
    assert code == 2 and out == ""
    assert "Z" in err and err.count("\n") == 1


def test_console_script_no_traceback():
    # The installed entry point, as a user runs it: one line, exit 2.
    proc = subprocess.run(
        [sys.executable, "-m", "backbone.cli", "rates", "--tau-c", "-1"], capture_output=True, text=True
    )
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr and proc.stderr.count("\n") == 1


class _no_raise:
    value = None

    def __enter__(self):
        return None

    def __exit__(self, *exc):
        return False
