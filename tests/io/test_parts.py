"""Inputs written in parts: a glob pattern reads every file it matches as one table.

Reference: the same rows in one file, read by the same readers (and aligned by aligner.align);
messages name the part file and its line, as for a single file. Common practice: tables exported
by distributed engines come as part files (part-00000.csv, ...), read in name order.
"""

import gzip

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

import aligner
from aligner.cli.app import app
from aligner.datasets.instances import as_frames, noisy_relabelled
from aligner.errors import InputFormatError
from aligner.io.readers import read_network, read_prior, read_table
from aligner.io.state import file_digest

runner = CliRunner()


def _split(frame: pd.DataFrame, folder, stem: str, k: int, header: bool = True, gz_last: bool = False):
    """Write ``frame`` as ``k`` part files (the last gzip-compressed when ``gz_last``)."""
    folder.mkdir(exist_ok=True)
    for t, chunk in enumerate(np.array_split(np.arange(len(frame)), k)):
        name = folder / f"{stem}-{t:05d}.tsv"
        text = frame.iloc[chunk].to_csv(sep="\t", index=False, header=header)
        if gz_last and t == k - 1:
            name.write_bytes(gzip.compress(text.encode()))
        else:
            name.write_text(text)
    return str(folder / f"{stem}-*.tsv")


@pytest.fixture(scope="module")
def pair(tmp_path_factory):
    d = tmp_path_factory.mktemp("parts")
    a, b, prior, truth = as_frames(noisy_relabelled(400, seed=3, noise=0.05, decoys=5))
    for name, frame in (("a.tsv", a), ("b.tsv", b), ("p.tsv", prior)):
        frame.to_csv(d / name, sep="\t", index=False)
    return d, a, b, prior


def test_parts_give_what_one_file_gives(pair):
    d, a, b, prior = pair
    pa_ = _split(a, d / "a_parts", "part", 3, gz_last=True)
    pp = _split(prior, d / "p_parts", "part", 4)
    one = read_network(d / "a.tsv")
    many = read_network(pa_)
    assert np.array_equal(one.names, many.names) and np.array_equal(one.edges, many.edges)
    assert many.source == pa_
    res_one = aligner.align(d / "a.tsv", d / "b.tsv", d / "p.tsv")
    res_many = aligner.align(pa_, d / "b.tsv", pp)
    assert np.array_equal(res_one.candidates.pairs, res_many.candidates.pairs)
    assert np.array_equal(res_one.candidates.prior, res_many.candidates.prior)
    assert res_one.pairs.equals(res_many.pairs)
    assert res_many.summary["inputs"]["network_a"]["source"].endswith("part-*.tsv")


def test_errors_name_the_part_file_and_its_line(pair, tmp_path):
    d, a, b, prior = pair
    pp = _split(prior, tmp_path / "p", "part", 3)
    third = tmp_path / "p" / "part-00002.tsv"
    lines = third.read_text().splitlines()
    lines[4] = lines[4].rsplit("\t", 1)[0] + "\tnot-a-number"  # line 5 of the third part
    third.write_text("\n".join(lines) + "\n")
    with pytest.raises(InputFormatError) as err:
        read_prior(pp, read_network(d / "a.tsv"), read_network(d / "b.tsv"))
    assert str(third) in str(err.value) and "line 5" in str(err.value)
    # weights: a negative one in the second part
    w = a.assign(w=1.0)
    wp = _split(w, tmp_path / "w", "e", 2)
    second = tmp_path / "w" / "e-00001.tsv"
    rows = second.read_text().splitlines()
    rows[2] = rows[2].rsplit("\t", 1)[0] + "\t-2"
    second.write_text("\n".join(rows) + "\n")
    with pytest.raises(InputFormatError) as err:
        read_network(wp)
    assert str(second) in str(err.value) and "line 3" in str(err.value) and "negative" in str(err.value)


def test_parts_must_agree_and_a_pattern_must_match(pair, tmp_path):
    d, a, b, prior = pair
    (tmp_path / "x").mkdir()
    (tmp_path / "x" / "p1.tsv").write_text("u\tv\n1\t2\n")
    (tmp_path / "x" / "p2.tsv").write_text("u\tv\tw\n1\t3\t0.5\n")
    with pytest.raises(InputFormatError, match="columns where"):
        read_table(str(tmp_path / "x" / "p*.tsv"), min_cols=2, max_cols=3, what="edge list")
    got = runner.invoke(app, ["align", str(tmp_path / "none-*.tsv"), str(d / "b.tsv"), "-p", str(d / "p.tsv"),
                              "-o", str(tmp_path / "out")])
    assert got.exit_code == 2 and "no file matches this pattern" in got.output
    assert not (tmp_path / "out").exists()


def test_a_file_whose_name_looks_like_a_pattern_is_read_as_itself(tmp_path):
    # Common practice (shells, glob): a name that exists is that file, whatever its characters.
    f = tmp_path / "edges[1].tsv"
    f.write_text("x\ty\ny\tz\n")
    assert read_network(f).n == 3


def test_the_command_reads_parts_and_an_update_fingerprints_them(pair, tmp_path):
    d, a, b, prior = pair
    pb = _split(b, tmp_path / "b", "part", 3)
    got = runner.invoke(app, ["align", str(d / "a.tsv"), pb, "-p", str(d / "p.tsv"), "-o", str(tmp_path / "r"),
                              "--quiet"])
    assert got.exit_code == 0, got.output
    before = file_digest(pb)
    assert before is not None
    (tmp_path / "b" / "part-00001.tsv").write_text((tmp_path / "b" / "part-00001.tsv").read_text() + "zz1\tzz2\n")
    assert file_digest(pb) != before  # a part changed: the pattern's fingerprint changes
    got = runner.invoke(app, ["update", str(tmp_path / "r"), "-o", str(tmp_path / "u")])
    assert got.exit_code == 2 and "has changed" in got.output and not (tmp_path / "u").exists()


def test_empty_parts_add_nothing(pair, tmp_path):
    # Common practice: a distributed export writes a file per partition, some of them empty or
    # holding the header only; they add no rows. A pattern whose files are all empty is refused.
    d, a, b, prior = pair
    pa_ = _split(a, tmp_path / "a", "part", 2)
    (tmp_path / "a" / "part-00002.tsv").write_text("")
    (tmp_path / "a" / "part-00003.tsv").write_text("node_a\tnode_b\n")
    one = read_network(d / "a.tsv")
    many = read_network(pa_)
    assert np.array_equal(one.names, many.names) and np.array_equal(one.edges, many.edges)
    (tmp_path / "e").mkdir()
    (tmp_path / "e" / "p0.tsv").write_text("")
    with pytest.raises(InputFormatError, match="every one of the 1 files"):
        read_network(str(tmp_path / "e" / "p*.tsv"))


def test_a_pattern_matching_one_file_keeps_the_pattern(pair, tmp_path):
    # Common practice: the pattern is the input; a run whose pattern matched one part must
    # notice, on update, a part added since (the fingerprint covers what the pattern matches).
    d, a, b, prior = pair
    pa_ = _split(a, tmp_path / "a", "part", 1)
    net = read_network(pa_)
    assert net.source == pa_ and net.n == read_network(d / "a.tsv").n
    before = file_digest(pa_)
    (tmp_path / "a" / "part-00001.tsv").write_text("zz1\tzz2\n")
    assert file_digest(pa_) != before
