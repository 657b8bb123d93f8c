"""Numbers typed at the bench: SI prefixes and the resistor letter codes.

The letter-as-decimal-point forms (2k2, 4M7, 4R7) are the RKM code of IEC 60062 (from memory: the
standard was not read here); SI prefixes follow the SI brochure (BIPM, 9th edition, table 7; common
practice for p n u m k M G).
"""

import pytest

from benchnf.cli import ExitStatus, main
from benchnf.notation import parse_number


@pytest.mark.parametrize(("text", "units", "value"), [
    ("150", (), 150.0), ("-3.5", (), -3.5), ("1.5e3", (), 1500.0), (".5", (), 0.5),
    ("1.5k", (), 1500.0), ("2k2", (), 2200.0), ("4K7", (), 4700.0), ("4M7", (), 4.7e6), ("1G", (), 1e9),
    ("150R", (), 150.0), ("4R7", (), 4.7), ("0R1", (), 0.1),
    ("1m", (), 1e-3), ("10u", (), 1e-5), ("10\u00b5", (), 1e-5), ("100n", (), 1e-7), ("2p", (), 2e-12),
    ("150ohm", ("ohm",), 150.0), ("2k2 ohm", ("ohm",), 2200.0), ("1mV", ("V",), 1e-3), ("296K", ("K",), 296.0),
    ("20kHz", ("Hz",), 20_000.0), ("\u22121.5", (), -1.5),
])
def test_forms_that_are_accepted(text, units, value):
    assert parse_number(text, units=units) == pytest.approx(value, rel=1e-12)


@pytest.mark.parametrize("text", ["", "abc", "2k2k", "1..5", "k2", "1e", "nan", "150 R R", "296K", "1mm", "2x"])
def test_forms_that_are_refused(text):
    with pytest.raises(ValueError, match="is not a number"):
        parse_number(text)


def test_the_command_line_takes_them(capsys):
    from pathlib import Path

    from benchnf.cli._types import kelvin, positive_volts
    from benchnf.cli.eni import _sweep_item
    assert _sweep_item("x.wav@2k2") == (Path("x.wav"), 2200.0, None)
    assert _sweep_item("s.wav@0R") == (Path("s.wav"), 0.0, None)
    assert positive_volts("1m") == pytest.approx(1e-3) and kelvin("296K") == 296.0
    rc = main(["analyze", "--terminated", "x.wav", "--gain-db", "40", "--rs", "2k2x"])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == ExitStatus.BAD_INPUT and len(err) == 1 and "forms like 150, 2k2, 150R" in err[0]
