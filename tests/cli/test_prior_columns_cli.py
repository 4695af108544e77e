"""--prior-columns on the command line: a wide sequence-search table used as it is; a wrong pick is one
error line naming the file, the line and the option, exit status 2."""

import json

import pandas as pd
from typer.testing import CliRunner

from aligner.cli.app import app

runner = CliRunner()


def _files(tmp_path):
    (tmp_path / "A.tsv").write_text("a1\ta2\na2\ta3\na3\ta4\na4\ta1\n")
    (tmp_path / "B.tsv").write_text("b1\tb2\nb2\tb3\nb3\tb4\nb4\tb1\n")
    # the 12 columns of the common tabular layout of sequence searches (common practice); a1 hits b1 twice
    head = "query\tsubject\tidentity\tlength\tmismatches\tgap_opens\tq_start\tq_end\ts_start\ts_end\tevalue\tbitscore\n"
    rows = ["a1\tb1\t99\t100\t1\t0\t1\t100\t1\t100\t1e-50\t200", "a1\tb1\t50\t20\t10\t0\t1\t20\t1\t20\t0.5\t20",
            "a1\tb2\t45\t80\t44\t1\t1\t80\t1\t80\t1e-10\t60", "a2\tb2\t97\t100\t3\t0\t1\t100\t1\t100\t1e-45\t190",
            "a3\tb3\t96\t100\t4\t0\t1\t100\t1\t100\t1e-44\t185", "a4\tb4\t95\t100\t5\t0\t1\t100\t1\t100\t1e-43\t180"]
    (tmp_path / "hits.tsv").write_text(head + "\n".join(rows) + "\n")
    return [str(tmp_path / n) for n in ("A.tsv", "B.tsv", "hits.tsv")]


def test_align_reads_a_wide_table_by_header_names(tmp_path):
    a, b, hits = _files(tmp_path)
    out = tmp_path / "run"
    r = runner.invoke(app, ["align", a, b, "-p", hits, "--prior-columns", "query,subject,evalue", "--score-kind",
                            "evalue", "-o", str(out), "-q"])
    assert r.exit_code == 0, r.output
    # hand-worked: the best rows are the four near-identical hits, so each ai goes to bi
    al = pd.read_csv(out / "alignment.tsv", sep="\t", comment="#")
    assert dict(zip(al.node_a, al.node_b)) == {"a1": "b1", "a2": "b2", "a3": "b3", "a4": "b4"}
    summary = json.loads((out / "summary.json").read_text())
    assert summary["parameters"]["prior_columns"] == "query,subject,evalue"


def test_a_wrong_pick_is_one_error_line_with_status_2(tmp_path):
    a, b, hits = _files(tmp_path)
    r = runner.invoke(app, ["align", a, b, "-p", hits, "--prior-columns", "1,2,14", "-o", str(tmp_path / "r")])
    assert r.exit_code == 2
    assert "hits.tsv, line 1: has 12 columns but --prior-columns 1,2,14" in r.output
    r = runner.invoke(app, ["align", a, b, "-p", hits, "--prior-columns", "query,subject,e-value", "-o",
                            str(tmp_path / "r")])
    assert r.exit_code == 2 and "line 1: has no column named 'e-value'" in r.output
    r = runner.invoke(app, ["align", a, b, "-p", hits, "--prior-columns", "1,2", "-o", str(tmp_path / "r")])
    assert r.exit_code == 2 and "--prior-columns must be three comma-separated columns" in r.output
    assert not (tmp_path / "r").exists()


def test_query_reads_the_same_wide_table(tmp_path):
    # the query takes the prior as align does: a1's best counterpart is b1 (its near-identical hit;
    # hand-worked from the table above), and its candidates are b1 and b2 (the pairs of the table)
    a, b, hits = _files(tmp_path)
    r = runner.invoke(app, ["query", a, b, "-p", hits, "--prior-columns", "query,subject,evalue", "--score-kind",
                            "evalue", "--node", "a1", "--json"])
    assert r.exit_code == 0, r.output
    doc = json.loads(r.output[r.output.index("{"):])  # after the warning about a1-b1's two rows
    got = [row["counterpart"] for row in doc["queries"][0]["counterparts"]]
    assert got[0] == "b1" and sorted(got) == ["b1", "b2"]
