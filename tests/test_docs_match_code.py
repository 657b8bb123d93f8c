"""Numbers the docs quote are the code's (a doc that disagrees with the code misleads the bench)."""

import re
from pathlib import Path

import pytest

from benchnf.dsp.psd import default_segment_length, make_window, window_enbw_bins

ROOT = Path(__file__).resolve().parent.parent


@pytest.mark.parametrize(("fs", "segment"), [(48_000.0, 16384), (96_000.0, 32768)])
def test_default_segment_and_rbw_quoted_in_the_method_page(fs, segment):
    text = (ROOT / "docs" / "method.md").read_text()
    khz = f"{fs / 1000:g} kHz"
    m = re.search(rf"{segment} (?:samples )?at {khz} \((\d+\.\d+) Hz bins, RBW (\d+\.\d+) Hz", text)
    assert m, f"docs/method.md does not quote the default segment at {khz}"
    assert default_segment_length(fs) == segment
    bin_hz = fs / segment
    rbw = window_enbw_bins(make_window("hann", segment)) * bin_hz
    assert float(m.group(1)) == pytest.approx(bin_hz, abs=0.005)
    assert float(m.group(2)) == pytest.approx(rbw, abs=0.005)


def test_the_analyze_help_quotes_the_same_default(capsys):
    from benchnf.cli import main
    assert main(["analyze", "--help"]) == 0
    out = " ".join(capsys.readouterr().out.split())
    rbw = window_enbw_bins(make_window("hann", 16384)) * 48_000.0 / 16384
    assert f"16384 at 48 kHz: RBW {rbw:.2f} Hz" in out


def test_the_plan_keys_documented_are_the_plan_keys():
    import dataclasses

    from benchnf.acquire import plan
    text = (ROOT / "docs" / "acquisition.md").read_text()
    block = text[text.index("```toml"):text.index("```", text.index("```toml") + 7)]
    documented = set(re.findall(r"^#? ?([a-z_]+) =", block, flags=re.M))

    def keys(cls):
        return {f.name for f in dataclasses.fields(cls)}
    assert documented == (keys(plan.PlanFile) - {"analysis", "step"}) | keys(plan.PlanAnalysis) | keys(plan._StepTable)
