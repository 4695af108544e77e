"""Writing: the one atomic writer, sets of files published together, sweep and prior tables.

Outside references: POSIX rename(2) (replacing a file by renaming is atomic, so a reader sees
the old file or the new one), RFC 8259 (JSON has no NaN or infinity), pandas' own TSV reader
for reading back what was written.
"""

import json
import math
import os
import signal
import stat
import threading
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from aligner.errors import InvalidParameterError
from aligner.io.outputs import (OUTPUT_FILES, SWEEP_TABLE, check_outdir, json_text, publish_outputs,
                                write_prior_table, write_sweep_outputs, write_text_atomic)


def _staging(tmp_path, out):
    return [e for e in os.listdir(tmp_path) if e.startswith(f".{out.name}.aligner-")]


def test_write_text_atomic_text_and_bytes(tmp_path):
    p = tmp_path / "f.txt"
    assert write_text_atomic(p, "ß\n") == p
    assert p.read_bytes() == "ß\n".encode("utf-8")  # text is written as UTF-8, line ends untouched
    write_text_atomic(p, b"\x89PNG\r\n")
    assert p.read_bytes() == b"\x89PNG\r\n"  # bytes as they are, replacing the file (POSIX rename)
    assert os.listdir(tmp_path) == ["f.txt"]  # no temporary file left


def test_write_text_atomic_gives_the_mode_a_plain_open_gives(tmp_path):
    # report.html and the prior tables were left 0600 (the mode of mkstemp's file) while the run's
    # other outputs had the umask's. Reference: a file made by Python's own open() beside it.
    plain = tmp_path / "plain.txt"
    plain.write_text("x")
    p = write_text_atomic(tmp_path / "atomic.txt", "x")
    assert stat.S_IMODE(p.stat().st_mode) == stat.S_IMODE(plain.stat().st_mode)
    # a file replaced keeps its own mode
    p.chmod(0o640)
    write_text_atomic(p, "y")
    assert stat.S_IMODE(p.stat().st_mode) == 0o640 and p.read_text() == "y"


def test_write_text_atomic_follows_a_umask_set_after_import(tmp_path):
    # the umask was read once when the module was imported, so a program that set another one
    # later got files with the old mode. Reference: a file made by Python's own open() under the
    # same umask.
    old = os.umask(0o077)
    try:
        plain = tmp_path / "plain.txt"
        plain.write_text("x")
        p = write_text_atomic(tmp_path / "atomic.txt", "x")
    finally:
        os.umask(old)
    assert stat.S_IMODE(plain.stat().st_mode) == 0o600
    assert stat.S_IMODE(p.stat().st_mode) == 0o600


def test_write_text_atomic_failure_leaves_nothing(tmp_path):
    with pytest.raises(OSError):
        write_text_atomic(tmp_path / "missing" / "f.txt", "x")
    assert os.listdir(tmp_path) == []


def test_publish_outputs_replaces_the_set_and_keeps_other_files(tmp_path):
    out = tmp_path / "out"
    publish_outputs(out, {"a.tsv": "one\n", "b.png": b"\x00\x01"})
    (out / "mine.txt").write_text("keep\n")
    publish_outputs(out, {"a.tsv": "two\n", "b.png": b"\x02"})
    assert sorted(os.listdir(out)) == ["a.tsv", "b.png", "mine.txt"]
    assert (out / "a.tsv").read_text() == "two\n" and (out / "b.png").read_bytes() == b"\x02"
    assert (out / "mine.txt").read_text() == "keep\n"
    assert not _staging(tmp_path, out)


def test_a_run_replaced_takes_the_files_that_describe_it_along(tmp_path):
    # Found by testing the commands together: `update RUN -o RUN --force` (or align --force) kept
    # the old run's report.html and the transfer's selection, and a replacing run written without
    # state or Parquet left the old run's state.npz (which a later update would start from) and
    # Parquet copies beside the new tables. Common practice: what describes the replaced run goes
    # with it; the user's own files and a sweep's (made from the inputs) stay.
    import aligner
    from aligner.datasets.instances import as_frames, noisy_relabelled
    from aligner.io.outputs import PARQUET_FILES, REPORT_FILE, TRANSFER_SELECTION, write_outputs

    a, b, prior, _ = as_frames(noisy_relabelled(120, seed=3, noise=0.05, decoys=3))
    res = aligner.align(a, b, prior)
    out = tmp_path / "run"
    write_outputs(out, res, parquet=True)
    for name in (REPORT_FILE, TRANSFER_SELECTION, SWEEP_TABLE, "mine.txt"):
        (out / name).write_text("made from the first run\n")
    write_outputs(out, res, force=True, parquet=False, state=False)
    kept = set(os.listdir(out))
    assert kept == {*OUTPUT_FILES, SWEEP_TABLE, "mine.txt"} - {"state.npz"}
    assert not kept & {*PARQUET_FILES, REPORT_FILE, TRANSFER_SELECTION, "state.npz"}
    assert not _staging(tmp_path, out)
    # a folder that held no run (no summary.json) keeps every file of those names, which are the
    # user's, and a folder named like one is never taken (found by reviewing the change)
    mine = tmp_path / "mine"
    mine.mkdir()
    (mine / REPORT_FILE).write_text("the user's page\n")
    (mine / PARQUET_FILES[0]).mkdir()
    write_outputs(mine, res, state=False)
    assert (mine / REPORT_FILE).read_text() == "the user's page\n" and (mine / PARQUET_FILES[0]).is_dir()
    (out / PARQUET_FILES[0]).mkdir()  # a replaced run's folder of a dropped name stays too
    write_outputs(out, res, force=True, state=False)
    assert (out / PARQUET_FILES[0]).is_dir() and not _staging(tmp_path, out)


def test_publish_outputs_failing_midway_changes_nothing(tmp_path):
    out = tmp_path / "out"
    publish_outputs(out, {"a.tsv": "one\n"})
    with pytest.raises(OSError):  # the second file cannot be made: the first must not appear either
        publish_outputs(out, {"a.tsv": "two\n", "no/such/dir.tsv": "x"})
    assert os.listdir(out) == ["a.tsv"] and (out / "a.tsv").read_text() == "one\n"
    assert not _staging(tmp_path, out)


def test_json_text_writes_non_finite_numbers_as_null():
    # RFC 8259, section 6: NaN and Infinity are not permitted in JSON
    got = json.loads(json_text({"a": math.nan, "b": [np.float64(math.inf), 1.5], "c": np.int64(3)}))
    assert got == {"a": None, "b": [None, 1.5], "c": 3}


def _sweep_table():
    return pd.DataFrame({"alpha": [0.5, 0.9], "ec": [1 / 3, 0.123456789], "nc": [math.nan, 0.5]})


def test_write_sweep_outputs(tmp_path):
    out = tmp_path / "out"
    figures = {"sweep.png": b"\x89PNG fake", "sweep.svg": b"<svg/>"}
    written = write_sweep_outputs(out, _sweep_table(), figures)
    assert written == [out / SWEEP_TABLE, out / "sweep.png", out / "sweep.svg"]
    assert (out / SWEEP_TABLE).read_text() == "alpha\tec\tnc\n0.5\t0.333333\tNA\n0.9\t0.123457\t0.5\n"
    # read back by pandas: %.6g keeps 6 significant digits (C printf %g), NA is a missing value
    back = pd.read_csv(out / SWEEP_TABLE, sep="\t")
    np.testing.assert_allclose(back["ec"], _sweep_table()["ec"], rtol=5e-6)
    assert back["nc"].isna().tolist() == [True, False]
    assert {f: (out / f).read_bytes() for f in figures} == figures


def test_sweep_alphas_are_written_in_full(tmp_path):
    # Found by testing the commands: with %.6g, 0.1234567 and 0.1234568 both became 0.123457
    # (two rows, one label) and 0.999999999 became 1 (outside [0, 1)); -0 was written as -0.
    # Reference: Python's float() reads each label back as the alpha given (round trip).
    alphas = [-0.0, 0.1234567, 0.1234568, 0.5, 0.999999999]
    table = pd.DataFrame({"alpha": alphas, "ec": [0.1] * 5})
    write_sweep_outputs(tmp_path / "out", table, {})
    labels = [line.split("\t")[0] for line in (tmp_path / "out" / SWEEP_TABLE).read_text().splitlines()[1:]]
    assert labels == ["0", "0.1234567", "0.1234568", "0.5", "0.999999999"]
    assert [float(x) for x in labels] == [a + 0.0 for a in alphas]


def test_write_sweep_outputs_refuses_an_existing_sweep_without_force(tmp_path):
    out = tmp_path / "out"
    publish_outputs(out, {f: "x\n" for f in OUTPUT_FILES})  # an alignment there is no obstacle
    write_sweep_outputs(out, _sweep_table(), {"sweep.png": b"1"})
    with pytest.raises(InvalidParameterError,
                       match=r"already holds sweep.tsv; .* pass --force \(force=True in Python\) to replace it"):
        write_sweep_outputs(out, _sweep_table().head(1), {"sweep.png": b"2"})
    assert (out / "sweep.png").read_bytes() == b"1"
    write_sweep_outputs(out, _sweep_table().head(1), {"sweep.png": b"2"}, force=True)
    assert (out / "sweep.png").read_bytes() == b"2" and len(pd.read_csv(out / SWEEP_TABLE, sep="\t")) == 1
    assert all((out / f).read_text() == "x\n" for f in OUTPUT_FILES)
    with pytest.raises(InvalidParameterError, match="figures must not hold a file named sweep.tsv"):
        write_sweep_outputs(out, _sweep_table(), {SWEEP_TABLE: b""}, force=True)


def test_write_sweep_outputs_refuses_a_file_as_directory(tmp_path):
    (tmp_path / "plain").write_text("x")
    with pytest.raises(InvalidParameterError, match="exists and is not a directory"):
        write_sweep_outputs(tmp_path / "plain", _sweep_table(), {})


def test_write_prior_table_refusals(tmp_path):
    df = pd.DataFrame({"score": [0.5, 1 / 3], "node_b": ["b1", "b2"], "node_a": ["a1", "a2"], "extra": [1, 2]})
    p = tmp_path / "prior.tsv"
    write_prior_table(df, p)
    # the column order is fixed, extra columns are left out, ten significant digits
    assert p.read_text() == "node_a\tnode_b\tscore\na1\tb1\t0.5\na2\tb2\t0.3333333333\n"
    with pytest.raises(InvalidParameterError, match=r"already exists; .*--out or pass --force"):
        write_prior_table(df, p)
    write_prior_table(df.head(1), p, force=True)
    assert len(p.read_text().splitlines()) == 2
    with pytest.raises(InvalidParameterError, match=r"is a directory; give a file path with --out"):
        write_prior_table(df, tmp_path, force=True)
    with pytest.raises(InvalidParameterError, match=r"'.*missing' is not a directory"):
        write_prior_table(df, tmp_path / "missing" / "p.tsv")
    with pytest.raises(InvalidParameterError) as info:
        write_prior_table(df[["node_a", "score"]], tmp_path / "q.tsv")
    assert str(info.value) == "df must have the columns node_a, node_b, score; got a table without node_b"
    assert not (tmp_path / "q.tsv").exists()


def test_check_outdir_names_the_files_asked_about(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "sweep.tsv").write_text("x")
    assert check_outdir(out) == out  # an alignment's outputs are not there
    with pytest.raises(InvalidParameterError, match=r"already holds sweep.tsv; choose another directory"):
        check_outdir(out, files=("sweep.tsv",))


def test_parquet_copies_hold_the_tsv_tables(tmp_path):
    # Reference: the TSV files of the same run, read back with pandas; the Parquet copies (read
    # with pandas.read_parquet, pyarrow's reader) hold the same rows in the same order, with
    # numeric columns typed. Without --parquet no Parquet file is written.
    import numpy as np
    import pandas as pd
    from typer.testing import CliRunner

    from aligner.cli.app import app

    demo = Path(__file__).resolve().parents[2] / "demo_pairs" / "firefly"
    args = ["align", str(demo / "network_a.tsv"), str(demo / "network_b.tsv"), "--prior", str(demo / "prior.tsv"),
            "-q", "--permutations", "0"]
    res = CliRunner().invoke(app, args + ["-o", str(tmp_path / "pq"), "--parquet"])
    assert res.exit_code == 0, res.output
    for stem in ("alignment", "conserved_edges", "transferred_edges"):
        tsv = pd.read_csv(tmp_path / "pq" / f"{stem}.tsv", sep="\t", keep_default_na=False)
        par = pd.read_parquet(tmp_path / "pq" / f"{stem}.parquet")
        assert list(par.columns) == list(tsv.columns) and len(par) == len(tsv) > 0
        for col in tsv.columns:
            if tsv[col].dtype.kind in "if":
                np.testing.assert_allclose(par[col].to_numpy(dtype=float), tsv[col].to_numpy(dtype=float),
                                           rtol=1e-9)  # the TSV holds 10 significant digits
            else:
                assert list(par[col].astype(str)) == list(tsv[col].astype(str)), (stem, col)
    assert pd.read_parquet(tmp_path / "pq" / "alignment.parquet")["conserved"].dtype.kind == "i"
    res = CliRunner().invoke(app, args + ["-o", str(tmp_path / "plain")])
    assert res.exit_code == 0 and not list((tmp_path / "plain").glob("*.parquet"))


@pytest.mark.skipif(not hasattr(signal, "pthread_kill"), reason="POSIX threads")
def test_a_signal_that_reaches_another_thread_waits_for_the_renames():
    # Found by interrupting runs: the renames masked SIGINT in the main thread only, but a
    # process-wide signal may reach any thread (numba's), whose C handler has the main thread run
    # the Python one, so Ctrl-C landed mid-swap (the user's files left in the hidden old folder).
    # Common practice: the interrupt is held until the renames are done, then delivered.
    from aligner.io.outputs import _signals_deferred

    stop = threading.Event()
    other = threading.Thread(target=stop.wait, daemon=True)
    other.start()
    done = []
    with pytest.raises(KeyboardInterrupt):
        with _signals_deferred():
            signal.pthread_kill(other.ident, signal.SIGINT)  # the signal reaches the other thread
            for _ in range(200):  # bytecodes: the main thread would run a pending handler here
                time.sleep(0.001)
            done.append("renamed")
    stop.set()
    assert done == ["renamed"]
    assert signal.getsignal(signal.SIGINT) is signal.default_int_handler  # put back


def test_a_part_file_a_killed_writer_left_goes_with_the_next_write(tmp_path):
    # Found by killing runs: write_text_atomic's temporary file, left by a writer killed outright
    # (SIGKILL), stayed beside the output for ever (77 MB beside a prior table). Common practice
    # (as for the staging folders): the next write removes the leftovers of writers no longer
    # running, and no one else's.
    import subprocess
    import sys

    gone = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True,
                          text=True, check=True).stdout.strip()  # a process id no longer running
    dead = tmp_path / f".prior.tsv.{gone}-abcd1234.part"
    alive = tmp_path / f".prior.tsv.{os.getpid()}-def45678.part"  # a writer still running (this one)
    other = tmp_path / f".other.tsv.{gone}-abc123.part"
    longer = tmp_path / f".prior.tsv.2024-06-01.tsv.{gone}-abcdefgh.part"  # another file's, whose name starts alike
    for p in (dead, alive, other, longer):
        p.write_text("partial")
    write_text_atomic(tmp_path / "prior.tsv", "node_a\tnode_b\tscore\n")
    assert not dead.exists() and alive.exists() and other.exists() and longer.exists()
    assert (tmp_path / "prior.tsv").read_text() == "node_a\tnode_b\tscore\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted([alive.name, other.name, longer.name, "prior.tsv"])


def test_signals_that_came_during_the_renames_each_do_what_they_would_have():
    # Found by reviewing the change: with SIGINT ignored (a background job) and SIGINT then SIGTERM
    # arriving during the renames, only the first was delivered afterwards, so SIGTERM was lost and
    # the process ran on. Common practice: each held signal is delivered once the renames are done
    # (an ignored one stays ignored). In a separate process, which SIGTERM ends.
    import subprocess
    import sys

    code = ("import os, signal\n"
            "from aligner.io.outputs import _signals_deferred\n"
            "signal.signal(signal.SIGINT, signal.SIG_IGN)\n"
            "with _signals_deferred():\n"
            "    os.kill(os.getpid(), signal.SIGINT)\n"
            "    os.kill(os.getpid(), signal.SIGTERM)\n"
            "    print('renamed', flush=True)\n"
            "print('still running', flush=True)\n")
    got = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert got.returncode == -signal.SIGTERM and got.stdout == "renamed\n", (got.returncode, got.stdout, got.stderr)
