"""The prior-from-labels command: files in, a prior table out, clear errors."""

import pandas as pd
from typer.testing import CliRunner

from aligner.cli.app import app

runner = CliRunner()


def _write(path, rows):
    path.write_text("".join(f"{a}\t{b}\n" for a, b in rows), encoding="utf-8")
    return path


def test_writes_a_prior_whose_best_pairs_are_the_same_names(tmp_path):
    # common practice: misspelled, abbreviated and reordered names of one firm stay each other's best match
    la = _write(tmp_path / "a.tsv", [("a1", "Quorvel Shipping Limited"), ("a2", "Tessaly Glassworks & Co"),
                                     ("a3", "Ombrin Dairy Cooperative")])
    lb = _write(tmp_path / "b.tsv", [("b1", "Dairy Cooperative Ombrin"), ("b2", "Quorvell Shipping Ltd"),
                                     ("b3", "Tessaly Glass Works and Company")])
    r = runner.invoke(app, ["prior-from-labels", str(la), str(lb), "-o", str(tmp_path / "p.tsv"), "-q"])
    assert r.exit_code == 0, r.output
    p = pd.read_csv(tmp_path / "p.tsv", sep="\t")
    assert list(p.columns) == ["node_a", "node_b", "score"]
    best = p.loc[p.groupby("node_a")["score"].idxmax()]
    assert dict(zip(best.node_a, best.node_b)) == {"a1": "b2", "a2": "b3", "a3": "b1"}
    assert ((p.score > 0) & (p.score <= 1)).all()


def test_identifiers_are_labels_from_networks(tmp_path):
    a = _write(tmp_path / "a.tsv", [("ALPHA-1", "ALPHA-2"), ("ALPHA-2", "BETA-7")])
    b = _write(tmp_path / "b.tsv", [("alpha_1", "alpha_2"), ("alpha_2", "beta_7")])
    r = runner.invoke(app, ["prior-from-labels", str(a), str(b), "-o", str(tmp_path / "p.tsv"), "--from-networks",
                            "-q"])
    assert r.exit_code == 0, r.output
    p = pd.read_csv(tmp_path / "p.tsv", sep="\t")
    best = p.loc[p.groupby("node_a")["score"].idxmax()]
    assert dict(zip(best.node_a, best.node_b)) == {"ALPHA-1": "alpha_1", "ALPHA-2": "alpha_2", "BETA-7": "beta_7"}


def test_errors_exit_2_and_write_nothing(tmp_path):
    la = _write(tmp_path / "a.tsv", [("a1", "Quorvel Shipping"), ("a1", "Tessaly Glass")])
    lb = _write(tmp_path / "b.tsv", [("b1", "Quorvel Shipping")])
    out = tmp_path / "p.tsv"
    r = runner.invoke(app, ["prior-from-labels", str(la), str(lb), "-o", str(out)])
    assert r.exit_code == 2 and "a.tsv" in r.output and "line 2" in r.output
    assert not out.exists()
    r = runner.invoke(app, ["prior-from-labels", str(tmp_path / "none.tsv"), str(lb), "-o", str(out)])
    assert r.exit_code == 2 and "none.tsv" in r.output and not out.exists()
    out.write_text("keep\n")
    r = runner.invoke(app, ["prior-from-labels", str(lb), str(lb), "-o", str(out)])
    assert r.exit_code == 2 and "--force" in r.output and out.read_text() == "keep\n"


def test_a_label_file_without_data_lines_is_refused(tmp_path):
    # Found by fuzzing: an empty, comment-only or header-only label file exited 0 and wrote a
    # header-only prior that align then refuses. prior-from-classes refuses an empty table (exit 2,
    # naming the file); common practice (docs/errors.md): the same here, nothing written.
    lb = _write(tmp_path / "b.tsv", [("b1", "Quorvel Shipping")])
    out = tmp_path / "p.tsv"
    for name, text, where in (("empty.tsv", "", "empty.tsv: is empty"),
                              ("comments.tsv", "# none yet\n\n", "comments.tsv: is empty"),
                              ("header.tsv", "node\tlabel\n", "header.tsv, line 1: has a header line but no data")):
        (tmp_path / name).write_text(text, encoding="utf-8")
        r = runner.invoke(app, ["prior-from-labels", str(tmp_path / name), str(lb), "-o", str(out)])
        assert r.exit_code == 2 and where in r.output and "expected a label file" in r.output, r.output
        assert "Traceback" not in r.output and not out.exists()


def test_labels_of_which_no_pair_is_similar_write_nothing(tmp_path):
    # Found by fuzzing: no pair at all was written as a header-only prior (exit 0) that align refuses.
    # Decided (docs/commands.md): a result of no pair is an error, exit 2, nothing written, the same
    # in prior-from-classes; the message names the option that would give pairs.
    la = _write(tmp_path / "a.tsv", [("a1", "Quorvel Shipping")])
    lb = _write(tmp_path / "b.tsv", [("b1", "Tessaly Glassworks")])
    out = tmp_path / "p.tsv"
    r = runner.invoke(app, ["prior-from-labels", str(la), str(lb), "-o", str(out), "--min-similarity", "0.9"])
    assert r.exit_code == 2 and "no pair of labels is similar enough" in r.output, r.output
    assert "--min-similarity 0.9" in r.output and "was not written" in r.output and not out.exists()


def test_reading_options_on_plain_label_files_are_refused(tmp_path):
    # Common practice (an option with nothing to act on is refused): a label file is read as
    # identifier, tab, label whatever --delimiter says, so 'a1,Quorvel Shipping' with --delimiter
    # comma became a node named 'a1,Quorvel Shipping' and a prior that names no node of the
    # networks. Exit 2, nothing written; --label-columns 2 reads such a table.
    la, lb = tmp_path / "a.csv", tmp_path / "b.csv"
    la.write_text("a1,Quorvel Shipping Limited\na2,Ombrin Dairy\n", encoding="utf-8")
    lb.write_text("b1,Quorvell Shipping Ltd\nb2,Dairy Ombrin\n", encoding="utf-8")
    out = tmp_path / "p.tsv"
    for extra in (["--delimiter", "comma"], ["--header", "no"]):
        r = runner.invoke(app, ["prior-from-labels", str(la), str(lb), "-o", str(out), *extra])
        assert r.exit_code == 2 and f"{extra[0]} applies to tables of records" in " ".join(r.output.split())
        assert not out.exists()
    r = runner.invoke(app, ["prior-from-labels", str(la), str(lb), "-o", str(out), "--delimiter", "comma",
                            "--label-columns", "2", "-q"])
    assert r.exit_code == 0, r.output
    assert set(pd.read_csv(out, sep="\t").node_a) == {"a1", "a2"}


def test_steps_are_reported_and_an_existing_output_is_refused_first(tmp_path):
    # Progress on long work (common practice): off a terminal, each step is one line as it ends,
    # with its time; -q silences it. An existing output is refused before the labels are even read
    # (here a label file that does not parse would otherwise be the error).
    import re

    la = _write(tmp_path / "a.tsv", [("a1", "Quorvel Shipping Limited"), ("a2", "Ombrin Dairy")])
    lb = _write(tmp_path / "b.tsv", [("b1", "Quorvell Shipping Ltd"), ("b2", "Dairy Ombrin")])
    out = tmp_path / "p.tsv"
    r = runner.invoke(app, ["prior-from-labels", str(la), str(lb), "-o", str(out)])
    assert r.exit_code == 0, r.output
    steps = re.findall(r"^stage (.+?) +\d+\.\d\d s$", r.output, flags=re.M)
    assert steps == ["reading", "n-grams", "A against B", "B against A", "writing"]
    assert "stage " not in runner.invoke(app, ["prior-from-labels", str(la), str(lb), "-o", str(out), "--force",
                                               "-q"]).output
    before = out.read_bytes()
    bad = tmp_path / "bad.tsv"
    bad.write_bytes(b"\xff\xfe not text")
    r = runner.invoke(app, ["prior-from-labels", str(bad), str(lb), "-o", str(out)])
    assert r.exit_code == 2 and "already exists" in r.output and "stage " not in r.output
    assert out.read_bytes() == before
