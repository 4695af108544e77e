"""Bad and awkward input, run through the command line.

Every case runs ``aligner align`` (or ``score``) through ``typer.testing.CliRunner`` and checks
the exit status (2 for a user error, 0 for awkward but valid input), that the message names the
file and line (or the option) and says what to do, that no traceback is printed, and that a
failed run leaves no output file. The outside references are the formats themselves: RFC 4180
(CSV quoting), the UTF-8 byte-order mark (Unicode standard, section 23.8), RFC 1952 (gzip),
POSIX file permissions; "common practice" marks a convention of the trade without a source.

What happens to E-values above 1 with ``--score-kind evalue``: such rows carry no evidence of
similarity (-log10 E would be negative) and are dropped; they are counted in
``summary.json`` (``inputs.prior.dropped_by_score_kind``) and named in a warning. When every
row naming known nodes is dropped, the run stops with exit status 2 and says to use
``--score-kind similarity`` if the column is a similarity.

Duplicate prior pairs with different scores: the highest score wins (the rule of
``aligner.io.readers.prior_from_columns``); a warning says so and ``summary.json`` counts them
(``inputs.prior.duplicate_pairs_merged``).
"""

import gzip
import importlib.util
import json
import os
import re
import shutil
from pathlib import Path

import pandas as pd
import pytest
from typer.testing import CliRunner

from aligner.io.outputs import OUTPUT_FILES
from aligner.cli.app import app
from aligner.errors import AlignerError

HERE = Path(__file__).resolve().parents[1]
ASSETS = HERE / "assets"
A, B, PRIOR, TRUTH = (ASSETS / f"small_{n}.tsv" for n in ("a", "b", "prior", "truth"))
runner = CliRunner()


def _write(tmp_path, name, content) -> Path:
    p = tmp_path / name
    if isinstance(content, bytes):
        p.write_bytes(content)
    else:
        p.write_text(content, encoding="utf-8", newline="")
    return p


def _align(tmp_path, *args, a=A, b=B, prior=PRIOR, truth=None, out="out"):
    argv = ["align", str(a), str(b), "--prior", str(prior), "-o", str(tmp_path / out), *map(str, args)]
    if truth is not None:
        argv += ["--truth", str(truth)]
    return runner.invoke(app, argv)


def _no_traceback(res):
    assert "Traceback" not in res.output, res.output
    assert res.exception is None or isinstance(res.exception, SystemExit), repr(res.exception)


def _no_outputs(out: Path):
    """A failed run leaves no output file, and no staging directory beside the output directory."""
    if out.exists():
        assert not [f for f in OUTPUT_FILES if (out / f).exists()], sorted(os.listdir(out))
    if out.parent.is_dir():
        assert not [e for e in os.listdir(out.parent) if e.startswith(f".{out.name}.aligner-")]


def _user_error(res, out, *patterns, where=None, line=None):
    """Exit 2, an "error:" line naming the file (or option) and line, matching ``patterns``."""
    assert res.exit_code == 2, res.output
    _no_traceback(res)
    text = " ".join(res.output.replace("│", " ").split())  # typer's own usage errors come in a wrapped box
    assert "error" in text.lower(), text
    if where is not None:
        assert str(where) in text, (where, text)
    if line is not None:
        assert f"line {line}:" in text, (line, text)
    for pat in patterns:
        assert re.search(pat, text), (pat, text)
    _no_outputs(out)
    return text


def _ok(res, out):
    assert res.exit_code == 0, res.output
    _no_traceback(res)
    assert all((out / f).exists() for f in OUTPUT_FILES)
    return pd.read_csv(out / "alignment.tsv", sep="\t", keep_default_na=False, dtype={"node_a": str, "node_b": str})


def _summary(out):
    return json.loads((out / "summary.json").read_text())


# --------------------------------------------------------------------------- malformed files

# (id, which input is bad, its content, patterns that must appear, line named or None)
# Each pattern names what is wrong and what to do.
BAD_FILES = [
    ("empty file", "a", "", [r"is empty", r"expected an edge list with 2 to 3 columns"], None),
    ("comments only", "a", "# nothing here\n\n", [r"is empty", r"lines starting with # are skipped"], None),
    ("header only", "a", "source\ttarget\n", [r"header line but no data rows", r"expected an edge list below it"], 1),
    ("one column", "a", "a1\na2\n", [r"has 1 column, expected 2 to 3", r"give --delimiter"], 1),
    ("too many columns", "a", "a1\ta2\t1\t2\n", [r"has 4 columns, expected at most 3", r"remove the extra columns"], 1),
    ("non-numeric weight", "a", "a1\ta2\t1\na2\ta3\theavy\n",
     [r"edge weight 'heavy' is not a finite number", r"must hold numbers"], 2),
    ("negative weight", "a", "a1\ta2\t1\na2\ta3\t-2\n", [r"edge weight -2 is negative", r"weights must be >= 0"], 2),
    ("empty field", "a", "a1\ta2\na3\t\n", [r"has an empty field", r"fill it in or remove the row"], 2),
    ("mixed delimiters", "a", "a1\ta2\na2,a3\n", [r"has 1 field where the first row has 2", r"mixed delimiters"], 2),
    ("unclosed quote", "a", 'a1\ta2\n"a3\ta4\na5\ta6\n', [r"quote", r"close it|check the quoting"], None),
    ("not UTF-8", "a", "a1\ta2\nZ\xfcrich\ta3\n".encode("latin-1"), [r"is not UTF-8 text", r"save it as UTF-8"], None),
    ("truncated gzip", "a", gzip.compress(b"a1\ta2\n" * 200)[:30], [r"cannot be read", r"complete and not damaged"],
     None),
    ("prior 2 columns", "prior", "a1\tb1\n", [r"has 2 columns, expected 3 for a prior table"], 1),
    ("prior 4 columns", "prior", "a1\tb1\t1\t2\n", [r"expected at most 3 for a prior table", r"remove the extra"], 1),
    ("prior non-numeric", "prior", "a1\tb1\t0.5\na2\tb2\thigh\n", [r"score 'high' is not a finite number"], 2),
    ("prior NaN", "prior", "a1\tb1\t0.5\na2\tb2\tnan\n", [r"score 'nan' is not a finite number"], 2),
    ("prior inf", "prior", "a1\tb1\tinf\n", [r"score 'inf' is not a finite number"], 1),
    ("prior negative", "prior", "# c\na1\tb1\t-1\n", [r"score -1.0 is negative", r"use --score-kind distance"], 2),
    ("prior header only", "prior", "node_a\tnode_b\tscore\n", [r"header line but no data rows"], 1),
    ("truth one column", "truth", "a1\n", [r"has 1 column, expected 2", r"give --delimiter"], 1),
]


@pytest.mark.parametrize("case, which, content, patterns, line", BAD_FILES, ids=[c[0] for c in BAD_FILES])
def test_malformed_file_is_a_user_error_naming_file_and_line(tmp_path, case, which, content, patterns, line):
    bad = _write(tmp_path, f"bad_{which}.tsv", content)
    kw = {"truth": TRUTH, which: bad}
    res = _align(tmp_path, **kw)
    _user_error(res, tmp_path / "out", *patterns, where=bad, line=line)


# --------------------------------------------------------------------------- paths

def test_missing_path_and_directory_are_user_errors(tmp_path):
    res = _align(tmp_path, a=tmp_path / "nope.tsv")
    _user_error(res, tmp_path / "out", r"no such file; check the path", where=tmp_path / "nope.tsv")
    d = tmp_path / "adir"
    d.mkdir()
    res = _align(tmp_path, prior=d)
    _user_error(res, tmp_path / "out", r"is a directory, not a file; give the path of a file", where=d)


def test_empty_path_says_it_names_the_current_directory(tmp_path):
    # an unset shell variable gives an empty argument, which the command line reads as "."
    # (common practice: pathlib.Path("") is Path(".")); the message says so
    res = runner.invoke(app, ["align", "", str(B), "--prior", str(PRIOR), "-o", str(tmp_path / "out")])
    _user_error(res, tmp_path / "out", r"is a directory \(an empty argument names it too\)")


@pytest.mark.skipif(not hasattr(os, "geteuid") or os.geteuid() == 0,
                    reason="running as root: chmod 000 does not stop root reading the file (POSIX permissions)")
def test_unreadable_file_is_a_user_error(tmp_path):
    p = _write(tmp_path, "secret.tsv", "a1\ta2\n")
    p.chmod(0)
    try:
        res = _align(tmp_path, a=p)
        _user_error(res, tmp_path / "out", r"permission denied", r"check its permissions", where=p)
    finally:
        p.chmod(0o644)


# --------------------------------------------------------------------------- prior contents

def test_evalues_above_one_are_dropped_counted_and_named(tmp_path):
    # -log10(E) of an E-value above 1 is negative: no evidence of similarity (common practice
    # in sequence search: E-values above 1 are not hits)
    prior = _write(tmp_path, "e.tsv", "a1\tb1\t1e-30\na2\tb2\t1e-20\na3\tb3\t5\na3\tb4\t3\na4\tb4\t0.01\n")
    res = _align(tmp_path, "--score-kind", "evalue", prior=prior)
    _ok(res, tmp_path / "out")
    assert re.search(r"2 of 5 prior rows have an E-value above 1 and were dropped", " ".join(res.output.split()))
    assert _summary(tmp_path / "out")["inputs"]["prior"]["dropped_by_score_kind"] == 2


def test_evalues_all_above_one_is_a_clear_error(tmp_path):
    prior = _write(tmp_path, "e.tsv", "a1\tb1\t5\na2\tb2\t12\nzz\tb3\t0.1\n")
    res = _align(tmp_path, "--score-kind", "evalue", prior=prior)
    _user_error(res, tmp_path / "out", r"every one of the 2 prior rows naming known nodes has an E-value above 1",
                r"use --score-kind similarity", where=prior)


def test_prior_naming_no_node_of_either_network(tmp_path):
    prior = _write(tmp_path, "p.tsv", "x1\ty1\t1\nx2\ty2\t2\n")
    res = _align(tmp_path, prior=prior)
    _user_error(res, tmp_path / "out", r"no usable prior pair", r"are the columns swapped", where=prior)


def test_prior_with_swapped_columns(tmp_path):
    prior = _write(tmp_path, "p.tsv", "b1\ta1\t1\nb2\ta2\t2\n")
    res = _align(tmp_path, prior=prior)
    _user_error(res, tmp_path / "out", r"are the columns swapped", where=prior)


def test_prior_with_no_pair_above_the_minimum_score(tmp_path):
    res = _align(tmp_path, "--min-score", "5")
    _user_error(res, tmp_path / "out", r"no prior pair scores at least the minimum score 5", r"lower --min-score",
                r"highest score is 0.95", where=PRIOR)


def test_duplicate_prior_pairs_keep_the_highest_score(tmp_path):
    text = PRIOR.read_text() + "a1\tb1\t0.1\na1\tb1\t2.5\na2\tb2\t0.05\n"
    res = _align(tmp_path, prior=_write(tmp_path, "dup.tsv", text))
    tab = _ok(res, tmp_path / "out")
    assert re.search(r"3 prior rows repeat a pair given on another row; each pair keeps its highest score",
                     " ".join(res.output.split()))
    got = dict(zip(zip(tab.node_a, tab.node_b), tab["prior"]))
    assert got[("a1", "b1")] == 2.5 and got[("a2", "b2")] == 0.8  # the highest of 0.9/0.1/2.5 and 0.8/0.05
    assert _summary(tmp_path / "out")["inputs"]["prior"]["duplicate_pairs_merged"] == 3


# --------------------------------------------------------------------------- awkward graphs

def test_self_loops_only(tmp_path):
    a = _write(tmp_path, "loops.tsv", "a1\ta1\na2\ta2\na3\ta3\n")
    res = _align(tmp_path, a=a)
    _ok(res, tmp_path / "out")
    s = _summary(tmp_path / "out")
    assert s["inputs"]["network_a"]["edges"] == 0 and s["inputs"]["network_a"]["self_loops_dropped"] == 3
    assert s["scores"]["ec"] == 0.0 and s["scores"]["n_matched"] == 3


def test_graph_with_one_node(tmp_path):
    a = _write(tmp_path, "one_a.tsv", "a1\ta1\n")
    b = _write(tmp_path, "one_b.tsv", "b1\tb1\n")
    tab = _ok(_align(tmp_path, a=a, b=b), tmp_path / "out")
    assert tab[["node_a", "node_b"]].values.tolist() == [["a1", "b1"]]


def test_isolated_nodes(tmp_path):
    # a node with no edge is listed as a self-loop (the edge-list convention for isolated nodes)
    a = _write(tmp_path, "iso.tsv", A.read_text() + "a7\ta7\n")
    prior = _write(tmp_path, "p.tsv", PRIOR.read_text() + "a7\tb3\t0.01\n")
    tab = _ok(_align(tmp_path, a=a, prior=prior), tmp_path / "out")
    assert _summary(tmp_path / "out")["inputs"]["network_a"]["nodes"] == 7
    assert dict(zip(tab.node_a, tab.node_b))["a1"] == "b1"


def test_same_file_for_a_and_b_gives_nc_one(tmp_path):
    ident = _write(tmp_path, "id.tsv", "".join(f"a{i}\ta{i}\t1\n" for i in range(1, 7)))
    truth = _write(tmp_path, "t.tsv", "".join(f"a{i}\ta{i}\n" for i in range(1, 7)))
    tab = _ok(_align(tmp_path, a=A, b=A, prior=ident, truth=truth), tmp_path / "out")
    s = _summary(tmp_path / "out")
    # node correctness (Kuchaiev et al. 2010) of aligning a network to itself with an identity prior
    assert s["scores"]["nc"] == 1.0 and s["scores"]["ec"] == 1.0
    assert (tab.node_a == tab.node_b).all()


def test_identifiers_with_spaces_quotes_unicode_and_very_long_names(tmp_path):
    long_name = "L" * 200_000  # longer than csv.field_size_limit() (131072) of the Python csv module
    names = ["node one", 'say "hi"', "q,uoted", "ß-7 ☃ 𝔘", long_name, "gene#1", "[/red] :smile:"]
    # TSV with RFC 4180 quoting where a field holds a quote
    def q(s):
        return '"' + s.replace('"', '""') + '"' if '"' in s else s
    edges = [(names[i], names[(i + 1) % len(names)]) for i in range(len(names))]
    a = _write(tmp_path, "names.tsv", "".join(f"{q(u)}\t{q(v)}\n" for u, v in edges))
    prior = _write(tmp_path, "p.tsv", "".join(f"{q(n)}\t{q(n)}\t1\n" for n in names))
    tab = _ok(_align(tmp_path, a=a, b=a, prior=prior), tmp_path / "out")
    assert sorted(tab.node_a) == sorted(names) and (tab.node_a == tab.node_b).all()


def test_markup_like_identifiers_are_printed_as_they_are(tmp_path):
    # rich console markup ("[/x]") and emoji codes (":smile:") in a warning must not be interpreted
    prior = _write(tmp_path, "p.tsv", PRIOR.read_text() + "[/x]\tb1\t1\n:smile:\tb2\t1\n")
    res = _align(tmp_path, prior=prior)
    _ok(res, tmp_path / "out")
    assert "[/x] / b1" in res.output and ":smile: / b2" in res.output


# --------------------------------------------------------------------------- encodings and line endings

@pytest.mark.parametrize("form", ["crlf", "bom", "gzip", "cr"])
def test_line_endings_bom_and_gzip_give_the_same_alignment(tmp_path, form):
    ref = _ok(_align(tmp_path, out="ref"), tmp_path / "ref")

    def convert(p: Path) -> Path:
        raw = p.read_bytes()
        data = {"crlf": raw.replace(b"\n", b"\r\n"), "bom": b"\xef\xbb\xbf" + raw,  # UTF-8 BOM
                "gzip": gzip.compress(raw), "cr": raw.replace(b"\n", b"\r")}[form]  # RFC 1952; old Mac CR
        return _write(tmp_path, f"{form}_{p.name}", data)

    tab = _ok(_align(tmp_path, a=convert(A), b=convert(B), prior=convert(PRIOR), out=form), tmp_path / form)
    assert tab.to_dict() == ref.to_dict()


# --------------------------------------------------------------------------- output directory

def test_existing_outputs_refused_unless_force(tmp_path):
    out = tmp_path / "out"
    _ok(_align(tmp_path), out)
    (out / "notes.txt").write_text("mine\n")
    before = {f: (out / f).read_bytes() for f in OUTPUT_FILES}
    res = _align(tmp_path)
    assert res.exit_code == 2
    _no_traceback(res)
    assert re.search(r"already holds alignment.tsv, conserved_edges.tsv, transferred_edges.tsv, summary.json, state.npz; choose another directory "
                     r"or pass --force", " ".join(res.output.split()))
    assert {f: (out / f).read_bytes() for f in OUTPUT_FILES} == before  # untouched
    _ok(_align(tmp_path, "--force"), out)
    assert (out / "notes.txt").read_text() == "mine\n"  # the user's other files are kept


def test_existing_empty_directory_is_fine(tmp_path):
    (tmp_path / "out").mkdir()
    _ok(_align(tmp_path), tmp_path / "out")


def test_output_under_a_regular_file(tmp_path):
    _write(tmp_path, "plain", "x")
    res = _align(tmp_path, out="plain/sub")
    _user_error(res, tmp_path / "plain" / "sub", r"cannot be made: .* is a file, not a directory",
                r"choose another directory with --out", where=tmp_path / "plain")


def test_output_that_is_a_regular_file(tmp_path):
    _write(tmp_path, "plain", "x")
    res = _align(tmp_path, out="plain")
    _user_error(res, tmp_path / "elsewhere", r"exists and is not a directory", r"choose another directory",
                where=tmp_path / "plain")
    assert (tmp_path / "plain").read_text() == "x"


@pytest.mark.skipif(not hasattr(os, "geteuid") or os.geteuid() == 0,
                    reason="running as root: a read-only directory does not stop root writing (POSIX permissions)")
def test_output_in_a_read_only_directory(tmp_path):
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    try:
        res = _align(tmp_path, out="ro/out")
        _user_error(res, ro / "out", r"cannot be written: permission denied", where=ro)
    finally:
        ro.chmod(0o755)


EMPTY_OUTPUT_CASES = [
    # every command that writes: its arguments with an empty output path in place, the option named
    ("align", ["align", str(A), str(B), "-p", str(PRIOR), "-o", ""], "--out"),
    ("sweep", ["sweep", str(A), str(B), "-p", str(PRIOR), "--alphas", "0.5", "-o", ""], "--out"),
    ("update", ["update", "previous_run", "-o", ""], "--out"),
    ("demo", ["demo", "-o", ""], "--out"),
    ("prior-from-labels", ["prior-from-labels", str(A), str(B), "--from-networks", "-o", ""], "--out"),
    ("prior-from-classes", ["prior-from-classes", str(A), str(B), "-o", ""], "--out"),
    ("report", ["report", ""], "OUTDIR"),
    ("transfer", ["transfer", ""], "OUTDIR"),
]


@pytest.mark.parametrize("case, args, flag", EMPTY_OUTPUT_CASES, ids=[c[0] for c in EMPTY_OUTPUT_CASES])
def test_an_empty_output_path_is_refused(tmp_path, monkeypatch, case, args, flag):
    # Found by fuzzing: -o "" (an unset shell variable in -o "$OUT") wrote align's and sweep's outputs
    # into the working directory, as Path("") is Path("."). Common practice (what cp, tar -f or
    # curl -o do with an empty path: refuse it): exit 2, one line naming the option, nothing written.
    monkeypatch.chdir(tmp_path)
    res = runner.invoke(app, args)
    assert res.exit_code == 2, res.output
    _no_traceback(res)
    assert f"error: {flag} must be a path; got '' (the output path is empty" in res.output
    assert os.listdir(tmp_path) == []


# --------------------------------------------------------------------------- options

OPTION_CASES = [
    # each message names the option as typed, what it must be (its declaration in aligner.config) and the value
    ("alpha 1", ["--alpha", "1"], [r"error: --alpha must be a number in \[0, 1\); got 1.0"]),
    ("alpha negative", ["--alpha", "-0.1"], [r"--alpha must be a number in \[0, 1\); got -0.1"]),
    ("alpha text", ["--alpha", "high"], [r"--alpha must be a number in \[0, 1\); got 'high'"]),
    ("top-k 0", ["--top-k", "0"], [r"--top-k must be a whole number >= 1; got 0"]),
    ("top-k negative", ["--top-k", "-3"], [r"--top-k must be a whole number >= 1; got -3"]),
    ("tol 0", ["--tol", "0"], [r"--tol must be a number in \(0, 1\); got 0.0"]),
    ("tol negative", ["--tol", "-1e-6"], [r"--tol must be a number in \(0, 1\); got -1e-06"]),
    # the residual starts below 1 (h sums to 1): 1 or more asks for no work, and 1e308 overflowed the push
    # thresholds with a numpy RuntimeWarning (noticed by differential testing)
    ("tol 1", ["--tol", "1"], [r"--tol must be a number in \(0, 1\); got 1.0"]),
    ("tol overflowing", ["--tol", "1e308"], [r"--tol must be a number in \(0, 1\); got 1e\+308"]),
    ("score kind", ["--score-kind", "pvalue"], [r"--score-kind must be one of similarity, evalue, distance; "
                                               r"got 'pvalue'"]),
    ("delimiter", ["--delimiter", "ab"], [r"--delimiter must be tab, comma, semicolon", r"got 'ab'"]),
    ("header", ["--header", "maybe"], [r"--header must be one of auto, yes, no; got 'maybe'"]),
    ("max-memory 0", ["--max-memory", "0"], [r"--max-memory must be a number in \(0, inf\); got 0.0"]),
    ("max-memory negative", ["--max-memory", "-2"], [r"--max-memory must be a number in \(0, inf\); got -2.0"]),
    # a beta whose product with the summed normalised scores overflows: was a traceback ("weights must be
    # finite") from the assignment solver (noticed by differential testing)
    ("beta overflowing", ["--beta", "1e308"], [r"error: --beta must be a number in \[0, .*\] for these scores",
                                               r"got 1e\+308"]),
    # numpy's generators take seeds >= 0 only: a negative seed was a traceback ("expected non-negative
    # integer") after the whole alignment had run (noticed by differential testing)
    ("permutation-seed negative", ["--permutations", "2", "--permutation-seed", "-1"],
     [r"error: --permutation-seed must be a whole number >= 0; got -1"]),
    # a structural weight whose combined prior sums past the largest float: h was all zero, every diffusion
    # score 0 and the matching arbitrary, with exit 0 (noticed by differential testing)
    ("structural-weight overflowing", ["--structural-candidates", "--structural-weight", "1e308"],
     [r"error: --structural-weight must be a number in \[0, .*\] for these candidates", r"got 1e\+308"]),
    # counts past what can be held: 10**23 random maps was a numpy traceback ("maximum allowed dimension
    # exceeded") after the whole alignment, 10**23 refinement starts and a local cluster of 10**23 workers
    # ran for ever (noticed by differential testing)
    ("permutations past the cap", ["--permutations", str(10**23)],
     [r"error: --permutations must be a whole number in \[0, 10\^9\]; got 100000000000000000000000"]),
    ("permutations one past the cap", ["--permutations", str(10**9 + 1)],
     [r"error: --permutations must be a whole number in \[0, 10\^9\]; got 1000000001"]),
    ("refine-starts past the cap", ["--refine-starts", str(10**23)],
     [r"error: --refine-starts must be a whole number in \[1, 10\^4\]; got 100000000000000000000000"]),
    ("workers past the cap", ["--engine", "dask", "--workers", str(10**23)],
     [r"error: --workers must be a whole number in \[1, 1024\]; got 100000000000000000000000"]),
    ("workers one past the cap", ["--engine", "dask", "--workers", "1025"],
     [r"error: --workers must be a whole number in \[1, 1024\]; got 1025"]),
]


@pytest.mark.parametrize("case, args, patterns", OPTION_CASES, ids=[c[0] for c in OPTION_CASES])
def test_bad_option_is_a_user_error_naming_the_option(tmp_path, case, args, patterns):
    res = _align(tmp_path, *args)
    _user_error(res, tmp_path / "out", *patterns)
    assert not (tmp_path / "out").exists()


def test_negative_permutation_seed_is_refused_in_python_too():
    # docs/errors.md: the Python API refuses the value the command line refuses, with
    # InvalidParameterError naming the keyword (noticed by differential testing)
    import aligner
    from aligner.errors import InvalidParameterError
    with pytest.raises(InvalidParameterError, match=r"permutation_seed must be a whole number >= 0; got -1"):
        aligner.align(str(A), str(B), prior=str(PRIOR), permutations=2, permutation_seed=-1)


def test_counts_past_their_caps_are_refused_in_python_too(tmp_path):
    # docs/errors.md and the help: --permutations at most 10^9, --refine-starts at most 10^4; the Python
    # keywords are refused the same way, before any work (10**23 random maps was a numpy traceback after the
    # whole alignment, 10**23 starts ran for ever); the largest allowed values are still taken, and 10,000
    # random maps still run (noticed by differential testing)
    import aligner
    from aligner.config import AlignConfig
    from aligner.errors import InvalidParameterError
    for name, bad, low, high in (("permutations", 10**23, 0, "10\\^9"), ("refine_starts", 10**23, 1, "10\\^4"),
                                 ("permutations", 10**9 + 1, 0, "10\\^9"), ("refine_starts", 10_001, 1, "10\\^4")):
        with pytest.raises(InvalidParameterError, match=rf"^{name} must be a whole number in \[{low}, {high}\]; "
                                                        rf"got {bad}$") as err:
            aligner.align(str(A), str(B), prior=str(PRIOR), **{name: bad})
        assert err.value.param == name
    assert AlignConfig(permutations=10**9, refine_starts=10**4).permutations == 10**9
    res = _align(tmp_path, "--permutations", "10000", "-q")
    assert res.exit_code == 0, res.output
    summary = json.loads((tmp_path / "out" / "summary.json").read_text())
    assert summary["significance"]["candidate_maps"]["permutations"] == 10_000


def test_overflowing_structural_weight_is_refused_in_python_too():
    # docs/errors.md: InvalidParameterError naming the keyword, as the command line names the option; a
    # large weight that keeps the sum finite still aligns (noticed by differential testing)
    import aligner
    from aligner.errors import InvalidParameterError
    with pytest.raises(InvalidParameterError, match=r"structural_weight must be a number in \[0, ") as err:
        aligner.align(str(A), str(B), prior=str(PRIOR), structural=True, structural_weight=1e308)
    assert err.value.param == "structural_weight"
    res = aligner.align(str(A), str(B), prior=str(PRIOR), structural=True, structural_weight=1e300)
    assert res.summary["solver"]["residual_l1"] <= res.summary["solver"]["tol"]
    assert (res.pairs["score"] > 0).all()


def test_memory_budget_too_small(tmp_path):
    # 1e-9 GiB is about one byte: the estimate of the product graph is over it
    res = _align(tmp_path, "--max-memory", "1e-9")
    text = _user_error(res, tmp_path / "out", r"the product graph over \d+ candidate pairs may have up to \d+ stored "
                       r"entries \(about [0-9.e-]+ GiB\), over the memory budget of 1e-09 GiB",
                       r"lower --top-k, raise --min-score, or raise --max-memory")
    assert "0.00 GiB" not in text  # small figures keep their digits


# --------------------------------------------------------------------------- truth and score tables

def test_truth_naming_some_unknown_nodes_warns_and_skips(tmp_path):
    truth = _write(tmp_path, "t.tsv", TRUTH.read_text() + "zz\tb1\na1\tyy\n")
    res = _align(tmp_path, truth=truth)
    _ok(res, tmp_path / "out")
    # the warning names the file, as the prior's other warnings do (noticed by fuzzing the input layer)
    assert re.search(r"warning: \S*t\.tsv: 2 of 8 truth rows name a node missing from its network and were "
                     r"skipped", " ".join(res.output.split()))
    assert _summary(tmp_path / "out")["scores"]["nc"] == 1.0


def test_truth_naming_no_known_node_is_an_error(tmp_path):
    truth = _write(tmp_path, "t.tsv", "zz\tyy\nb1\ta1\n")
    res = _align(tmp_path, truth=truth)
    _user_error(res, tmp_path / "out", r"none of its 2 rows names a node of network A in the first column",
                r"are the columns swapped", where=truth)


def test_score_command_refuses_an_alignment_of_unknown_nodes(tmp_path):
    al = _write(tmp_path, "al.tsv", "x\ty\n")
    res = runner.invoke(app, ["score", str(A), str(B), str(al)])
    assert res.exit_code == 2 and str(al) in res.output and "none of its 1 rows" in res.output
    _no_traceback(res)


def test_score_command_refuses_a_map_that_is_not_one_to_one(tmp_path):
    # Found by fuzzing: the message named no line, where the seed reader names both lines of the same
    # problem. The documented form (docs/errors.md): "<file>, line <n>: ...", naming the earlier line
    # too; a comment line and a row naming an unknown node do not shift the lines named.
    al = _write(tmp_path, "al.tsv", "# map\na1\tb1\nzz\tb2\na2\tb1\n")
    res = runner.invoke(app, ["score", str(A), str(B), str(al)])
    assert res.exit_code == 2, res.output
    assert f"{al}, line 4: node 'b1' of network B is already in the pair of line 2" in res.output
    assert "one-to-one" in res.output and "keep one of the two lines" in res.output
    _no_traceback(res)
    al = _write(tmp_path, "al2.tsv", "a1\tb1\na2\tb2\na1\tb1\n")  # the same row twice
    res = runner.invoke(app, ["score", str(A), str(B), str(al)])
    assert res.exit_code == 2 and f"{al}, line 3: repeats the pair ('a1', 'b1') of line 1" in res.output
    _no_traceback(res)


def test_query_node_file_names_its_line_and_may_be_gzip(tmp_path):
    # Found by fuzzing: an unknown node of a --node-file was reported without file and line, and a
    # gzip node file was refused as "not UTF-8 text" though every other input may be gzip (RFC 1952,
    # detected by content). Spaces around an identifier are not part of it (docs/formats.md).
    text = "# asked\na1  \n\n a2\t\nzz\n"
    plain = _write(tmp_path, "nodes.txt", text)
    packed = _write(tmp_path, "nodes.gz", gzip.compress(text.encode()))
    base = ["query", str(A), str(B), "-p", str(PRIOR), "--no-answer"]
    for path in (plain, packed):
        res = runner.invoke(app, base + ["--node-file", str(path)])
        assert res.exit_code == 2, res.output
        _no_traceback(res)
        assert f"error: {path}, line 5: 'zz' is not a node of network A" in " ".join(res.output.split())
    good = _write(tmp_path, "good.gz", gzip.compress(text.replace("zz\n", "").encode()))
    res = runner.invoke(app, base + ["--node-file", str(good), "-n", "a3", "--json"])
    assert res.exit_code == 0, res.output
    assert [q["query"] for q in json.loads(res.output)["queries"]] == ["a3", "a1", "a2"]


# --------------------------------------------------------------------------- fuzz regressions

REGRESSIONS = sorted((HERE / "regressions").glob("*.input"))


def _fuzz_module():
    spec = importlib.util.spec_from_file_location("fuzz_readers", HERE.parent / "scripts" / "dev" / "fuzz_readers.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


@pytest.mark.parametrize("path", REGRESSIONS, ids=[p.stem for p in REGRESSIONS])
def test_fuzz_regression(path):
    """Each saved input once crashed a reader or broke an invariant (see its .json note).

    ``run_one`` reads it with every reader, checks the invariants (sorted unique names, edges
    u < v, finite scores, errors naming the file and a line >= 1) and that the fast and the
    careful reader agree; any exception that is not an AlignerError fails.
    """
    note = json.loads(path.with_suffix(".json").read_text())
    _fuzz_module().run_one(path.read_bytes(), note["options"])


def test_fuzz_regressions_found_by_hand(tmp_path):
    """The bug classes behind the saved regressions, spelt out."""
    from aligner.io.readers import read_network

    def net(text, **kw):
        return read_network(_write(tmp_path, "n.tsv", text), **kw)

    # a '#' inside a field is part of it, whether or not the file has comment lines elsewhere
    assert list(net("a\tb#c\nx\ty\n#note\n").names) == ["a", "b#c", "x", "y"]
    # a blank line ended by a lone CR does not shift the rows (pandas' skiprows miscounted it)
    assert list(net("\ra\tb\rc\td\r").names) == ["a", "b", "c", "d"]
    # a tab-only line of a TSV is a row of empty fields, reported at its own line
    with pytest.raises(AlignerError, match=r"line 2: has an empty field"):
        net("a\tb\n\t\nc\td\n")
    # a form feed or no-break space alone on a line is data, not a blank line: its line is named
    with pytest.raises(AlignerError, match=r"line 2: has 1 field"):
        net("a\tb\n\x0c\n")
    # a quoted field may not run over a line break
    with pytest.raises(AlignerError, match=r"quote that is not closed on its line"):
        net('x\ty\n"a\nb"\tc\n')
    # gzip is detected by content, not by the file name
    p = _write(tmp_path, "plain.tsv.gz", "a\tb\n")
    assert list(read_network(p).names) == ["a", "b"]


@pytest.mark.parametrize("args, says", [
    (["align", "only_one.tsv"], r"align: missing argument 'network_b'"),
    (["align", "--bogus"], r"align: no such option: --bogus"),
    (["nosuch"], r"no such command 'nosuch'"),
])
def test_command_line_mistakes_are_one_error_line_with_status_2(args, says):
    # Issue found in a fresh-clone trial: mistakes caught by the command-line framework came in
    # its boxed style while every other user error is one line. Common practice (POSIX utility
    # conventions): a usage error is one diagnostic line and a non-zero status, 2 here as for
    # every user error of the package.
    import re

    from typer.testing import CliRunner

    from aligner.cli.app import app

    res = CliRunner().invoke(app, args)
    assert res.exit_code == 2
    lines = [line for line in res.output.splitlines() if line.strip()]
    assert len(lines) == 1 and re.match(r"^error: .*" + says + r".*; see '.*--help'$", lines[0]), res.output
    assert "╭" not in res.output and "Traceback" not in res.output


def test_an_interrupt_wrapped_by_a_library_is_still_an_interruption():
    # Seen in the kill test: Ctrl-C while numba loads a kernel from its cache surfaces as a
    # SystemError caused by the KeyboardInterrupt; the command line treats it as Ctrl-C (status
    # 130, one line, no traceback). Common practice: exit 128 + SIGINT for an interrupted run.
    import typer

    from aligner.cli.runtime import user_errors

    def loading():
        try:
            raise KeyboardInterrupt
        except KeyboardInterrupt as exc:
            raise SystemError("returned a result with an exception set") from exc

    with pytest.raises(typer.Exit) as stop:
        with user_errors():
            loading()
    assert stop.value.exit_code == 130
    with pytest.raises(SystemError):  # any other SystemError is not swallowed
        with user_errors():
            raise SystemError("something else")


def test_product_weights_past_the_largest_number_are_refused(tmp_path):
    # Found by fuzzing the input layer: with --weight-model product the walk divides w_A * w_B by
    # strength products, and weights near 1e200 on both sides made them inf (inf / inf: the solver
    # stopped with a message about inf or NaN in the inputs, which have none). Common practice:
    # refuse before solving, naming the option; the agreement model uses only the weights' order.
    def edges(path):  # the asset's edge rows (a comment line and a header line above them)
        return [line.split("\t") for line in path.read_text().splitlines() if line[:1] not in ("#", "n")]

    rows = edges(A)
    a = _write(tmp_path, "aw.tsv", "".join(f"{u}\t{v.strip()}\t1e200\n" for u, v, *_ in rows))
    rows = edges(B)
    b = _write(tmp_path, "bw.tsv", "".join(f"{u}\t{v.strip()}\t1e200\n" for u, v, *_ in rows))
    res = _align(tmp_path, "--weighted", "--weight-model", "product", a=a, b=b)
    _user_error(res, tmp_path / "out", r"weight model product .* pass the largest number")
    _ok(_align(tmp_path, "--weighted", "--weight-model", "agreement", a=a, b=b, out="ok"), tmp_path / "ok")
