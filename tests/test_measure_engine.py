"""The engine as a whole: streaming equals one pass, column sets, sequence labels, errors, the command."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from _measure_support import capture_of, three_phase
from waveforms.capture import Channel, from_arrays
from waveforms.errors import InvalidParameterError
from waveforms.measure import iter_measure, measure

FS = 10_000.0


def eventful_capture():
    """3 s, 50.2 Hz, harmonics, noise, a dip, a 10 deg phase step, a dead phase C, a NaN gap (invented)."""
    t = np.arange(int(FS * 3.0)) / FS
    rng = np.random.default_rng(9)
    v = three_phase(t, 230.0, 50.2, 0.4, {5: (0.04, 0.1), 7: (0.02, 0.3)})
    v2 = three_phase(t, 230.0, 50.2, 0.4 + np.radians(10), {5: (0.04, 0.1), 7: (0.02, 0.3)})
    v = {c: np.where(t >= 1.3, v2[c], v[c]) for c in v}
    v = {c: np.where((t > 0.7) & (t < 0.9), 0.6 * x, x) for c, x in v.items()}
    v["C"] = np.where(t > 2.2, 0.0, v["C"])
    i = three_phase(t, 15.0, 50.2, 0.4 - 0.5, {5: (0.1, 0.0)})
    i["C"] = np.where(t > 2.2, 0.0, i["C"])
    i["B"] = np.where(t > 2.2, -i["A"], i["B"])
    v = {c: x + rng.normal(0, 0.2, t.size) for c, x in v.items()}
    for c in v:
        v[c][15000:15500] = np.nan
    return capture_of(v, i, FS)


def assert_frames_close(a: pd.DataFrame, b: pd.DataFrame):
    assert list(a.columns) == list(b.columns)
    assert len(a) == len(b) and len(a) > 0
    for c in a.columns:
        x, y = a[c].to_numpy(), b[c].to_numpy()
        if x.dtype.kind in "fc":
            scale = np.nanmax(np.abs(y)) if np.isfinite(y).any() else 1.0
            np.testing.assert_allclose(x, y, rtol=1e-9, atol=1e-9 * max(scale, 1.0), equal_nan=True, err_msg=c)
        else:
            assert (x == y).all(), c


class TestStreaming:
    @pytest.mark.parametrize("chunk", [4_001, 25_000])
    def test_streamed_equals_one_pass(self, chunk):
        # Requirement of the issue: chunked processing equals whole-capture processing to float tolerance.
        cap = eventful_capture()
        whole = measure(cap, chunk_samples=cap.n_samples)
        part = measure(cap, chunk_samples=chunk)
        assert_frames_close(part.cycles, whole.cycles)
        assert_frames_close(part.half_cycles, whole.half_cycles)
        assert_frames_close(part.harmonics, whole.harmonics)

    def test_iter_measure_yields_time_ordered_blocks(self):
        cap = eventful_capture()
        blocks = list(iter_measure(cap, chunk_samples=6_000))
        assert len(blocks) >= 4
        t = np.concatenate([b[0]["t_s"].to_numpy() for b in blocks])
        assert np.all(np.diff(t) > 0)
        cyc = np.concatenate([b[0]["cycle"].to_numpy() for b in blocks])
        assert np.array_equal(cyc, np.arange(cyc.size))


class TestColumns:
    def test_four_wire_has_the_contract_columns(self):
        t = np.arange(int(FS * 0.4)) / FS
        cyc = measure(capture_of(three_phase(t, 230.0, 50.0), three_phase(t, 5.0, 50.0, -0.3), FS)).cycles
        expected = {"t_s", "t_start_s", "t_end_s", "frequency_hz", "Va_rms", "Va_mag", "Va_ang_deg", "Ic_ang_deg",
                    "V0", "V1", "V2", "V1_ang_deg", "I0", "I1", "I2", "V2_V1_pct", "I2_I1_pct", "V0_V1_pct",
                    "I0_I1_pct", "V_unbal_nema_pct", "V_unbal_pvur_pct", "V_unbal_iec_ll_pct", "I_unbal_nema_pct",
                    "I_unbal_pvur_pct", "phase_sequence", "Pa_w", "Pb_w", "Pc_w", "P_w", "Qa_var", "Qb_var",
                    "Qc_var", "Q_var", "Sa_va", "Sb_va", "Sc_va", "S_va", "PFa", "PFb", "PFc", "PF", "P1_w",
                    "Q1_var", "DPF"}
        assert expected <= set(cyc.columns)

    def test_line_to_line_only_has_no_zero_sequence(self):
        # With only line-to-line voltages the zero sequence of the phase voltages is unknown: absent.
        t = np.arange(int(FS * 0.4)) / FS
        v = three_phase(t, 230.0, 50.0)
        vll = {"A": v["A"] - v["B"], "B": v["B"] - v["C"], "C": v["C"] - v["A"]}
        cyc = measure(capture_of(vll, None, FS, voltages="LL")).cycles.iloc[2:-2]
        assert "V0" not in cyc and "V0_V1_pct" not in cyc and "V_unbal_pvur_pct" not in cyc
        np.testing.assert_allclose(cyc["V1"], 230.0, rtol=1e-8)  # line-to-neutral equivalent
        np.testing.assert_allclose(cyc["Vab_mag"], 230.0 * np.sqrt(3), rtol=1e-8)

    def test_no_current_means_no_current_columns(self):
        t = np.arange(int(FS * 0.3)) / FS
        cyc = measure(capture_of(three_phase(t, 230.0, 50.0), None, FS)).cycles
        assert not [c for c in cyc.columns if c.startswith(("I", "P", "Q", "S", "DPF"))]


class TestSequenceLabels:
    def test_acb_supply_is_labelled_acb(self):
        # REFERENCES.md trap: with an A-C-B supply the standard matrix puts the large component in V2;
        # the sequence label must say ACB, and the rotation-independent unbalance stays small.
        t = np.arange(int(FS * 0.4)) / FS
        cyc = measure(capture_of(three_phase(t, 230.0, 50.0, sequence="ACB"), None, FS)).cycles.iloc[2:-2]
        assert (cyc["phase_sequence"] == "ACB").all()
        np.testing.assert_allclose(cyc["V2"], 230.0, rtol=1e-8)
        assert cyc["V1"].max() < 1e-6
        assert cyc["V_unbal_vuf_pct"].max() < 1e-6
        np.testing.assert_allclose(cyc["Vb_ang_deg"], 120.0, atol=1e-6)  # B leads A by 120 deg in A-C-B

    def test_open_line_current_in_capture(self):
        # One line open (Ic = 0, Ib = -Ia): |I1| = |I2| and I0 = 0 (Fortescue 1918; REFERENCES.md open line).
        t = np.arange(int(FS * 0.4)) / FS
        i = three_phase(t, 10.0, 50.0, -0.5)
        i = {"A": i["A"], "B": -i["A"], "C": np.zeros_like(t)}
        cyc = measure(capture_of(three_phase(t, 230.0, 50.0), i, FS)).cycles.iloc[2:-2]
        np.testing.assert_allclose(cyc["I1"], cyc["I2"], rtol=1e-9)
        np.testing.assert_allclose(cyc["I1"], 10.0 / np.sqrt(3), rtol=1e-8)
        assert cyc["I0"].max() < 1e-9


class TestErrors:
    def test_duplicate_roles_are_refused(self):
        chans = (Channel("Va", "voltage", "A", "LN", "V"), Channel("Va2", "voltage", "A", "LN", "V"))
        cap = from_arrays(np.zeros((2, 1000)), chans, FS, nominal_frequency_hz=50.0)
        with pytest.raises(InvalidParameterError, match=r"channels \['Va'\] appear twice"):
            measure(cap)

    def test_no_phase_channel_is_refused(self):
        chans = (Channel("In", "current", "N", "neutral", "A"),)
        cap = from_arrays(np.zeros((1, 1000)), chans, FS, nominal_frequency_hz=50.0)
        with pytest.raises(InvalidParameterError, match="no phase voltage or line current"):
            measure(cap)

    def test_bad_chunk_is_refused(self):
        t = np.arange(1000) / FS
        with pytest.raises(InvalidParameterError, match="chunk_samples=0 must be positive"):
            list(iter_measure(capture_of(three_phase(t, 230.0, 50.0), None, FS), chunk_samples=0))


class TestCommand:
    def test_measure_command_writes_parquet_and_csv(self, tmp_path):
        from waveforms.cli import cli
        from waveforms.io.hdf5_native import write_native

        t = np.arange(int(FS * 0.6)) / FS
        cap = capture_of(three_phase(t, 230.0, 50.0), three_phase(t, 5.0, 50.0, -0.3), FS, nominal_voltage_v=400.0)
        src = write_native(cap, tmp_path / "site.h5")
        res = CliRunner().invoke(cli, ["measure", str(src), "--out", str(tmp_path / "out"), "--intervals", "basic",
                                       "--chunk", "2000"])
        assert res.exit_code == 0, res.output
        out = tmp_path / "out"
        for name in ("cycles", "half_cycles", "harmonics", "intervals_basic"):
            assert (out / f"site.{name}.parquet").exists() and (out / f"site.{name}.csv").exists()
        assert (out / "site.measure.json").exists()
        assert not list(out.glob("*.part"))
        cyc = pd.read_parquet(out / "site.cycles.parquet")
        ref = measure(cap).cycles
        assert_frames_close(cyc[ref.columns.drop("phase_sequence")], ref[ref.columns.drop("phase_sequence")])
        csv = pd.read_csv(out / "site.cycles.csv")
        np.testing.assert_allclose(csv["Va_rms"], ref["Va_rms"], rtol=1e-12)

    def test_measure_command_missing_file_is_one_line(self, tmp_path):
        from waveforms.cli import cli

        res = CliRunner().invoke(cli, ["measure", str(tmp_path / "nope.h5"), "--out", str(tmp_path / "o")])
        assert res.exit_code == 2
        assert "file not found" in res.output and "Traceback" not in res.output
