"""Command-line options derived from the declarations in aligner.config.

The reference for every check here is the declarations themselves (``aligner.config.specs``):
each field's flag must appear in the help of the commands that take it, and a bad value typed
on the command line must fail with the same message as the Python keyword, the flag in the
keyword's place (that is the point of declaring every option once).
"""

import json
import re
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest
import typer
from typer.testing import CliRunner

from aligner.cli.app import app
from aligner.cli.options import Use, command
from aligner.cli.runtime import message
from aligner.config import AlignConfig, LabelConfig, QueryConfig, specs
from aligner.errors import InvalidParameterError

ASSETS = Path(__file__).resolve().parents[1] / "assets"
A, B, PRIOR, TRUTH = (ASSETS / f"small_{n}.tsv" for n in ("a", "b", "prior", "truth"))
runner = CliRunner(env={"COLUMNS": "250"})  # wide enough that no flag is cut short in the help


def _help(*cmd: str) -> str:
    res = runner.invoke(app, [*cmd, "--help"])
    assert res.exit_code == 0, res.output
    return " ".join(res.output.replace("│", " ").split())


def _has_flag(text: str, flag: str) -> bool:
    return re.search(rf"(?<![\w-]){re.escape(flag)}(?![\w-])", text) is not None


def _flags(spec) -> list[str]:
    return spec.flag.split("/")  # a boolean may declare its pair, "--refine/--no-refine"


# --------------------------------------------------------------------------- every option in the help

@pytest.mark.parametrize("cmd, skip", [("align", ()), ("sweep", ("alpha",))])
def test_every_align_option_is_in_the_help(cmd, skip):
    text = _help(cmd)
    for name, (default, spec) in specs(AlignConfig).items():
        if name in skip:
            continue
        for flag in _flags(spec):
            assert _has_flag(text, flag), (cmd, name, flag)
        assert spec.group in text, (cmd, name, spec.group)  # shown in its declared panel
        if spec.kind == "choice":
            assert f"Choices: {', '.join(spec.choices)}." in text, (cmd, name)
        if default is not None and spec.kind != "bool":
            assert f"[default: {default}]" in text, (cmd, name, default)
    if cmd == "sweep":  # the sweep's own option, in place of --alpha
        assert _has_flag(text, "--alphas") and not _has_flag(text, "--alpha")


def test_query_and_label_options_are_in_their_help():
    text = _help("query")
    for _, spec in specs(QueryConfig).values():
        for flag in _flags(spec):  # both halves of an on/off flag
            assert _has_flag(text, flag), flag
    text = _help("prior-from-labels")
    for _, spec in specs(LabelConfig).values():
        assert _has_flag(text, spec.flag), spec.flag


def test_shared_options_are_the_same_everywhere():
    # --quiet/-q is declared once in aligner.cli.options and taken by every command
    for cmd in ("align", "sweep", "query", "demo", "score", "report", "prior-from-labels"):
        text = _help(cmd)
        assert _has_flag(text, "--quiet") and _has_flag(text, "-q"), cmd
    for cmd in ("align", "sweep", "query"):
        text = _help(cmd)
        for flag in ("--prior", "-p", "--seeds", "--delimiter", "--header", "--top-k", "--seed-weight"):
            assert _has_flag(text, flag), (cmd, flag)


# --------------------------------------------------------------------------- bad values name the flag

def _bad_value(default, spec):
    """A value the declaration refuses, as typed on the command line."""
    if spec.kind == "choice":
        return "no-such-choice"
    if spec.low is not None:
        return str(spec.low - 1)
    if spec.high is not None:
        return str(spec.high + 1)
    return "x" if spec.kind == "real" else "1.5"  # not a number / not a whole number


def _as_python(typed: str, kind: str):
    """The value Python receives for ``typed`` (a number when it reads as one; else the text)."""
    try:
        return {"real": float, "int": int}[kind](typed)
    except (KeyError, ValueError):
        return typed


BAD = [(n, d, s) for n, (d, s) in specs(AlignConfig).items() if s.kind in ("real", "int", "choice")]


@pytest.mark.parametrize("name, default, spec", BAD, ids=[b[0] for b in BAD])
@pytest.mark.parametrize("cmd", ["align", "sweep"])
def test_bad_value_exits_2_naming_the_flag(tmp_path, cmd, name, default, spec):
    if cmd == "sweep" and name == "alpha":
        pytest.skip("sweep takes --alphas instead of --alpha")
    typed = _bad_value(default, spec)
    res = runner.invoke(app, [cmd, str(A), str(B), "-p", str(PRIOR), "-o", str(tmp_path / "out"), spec.flag, typed])
    assert res.exit_code == 2, res.output
    assert "Traceback" not in res.output
    # the same value given to Python: the message names the keyword; the command line puts the flag there
    value = _as_python(typed, spec.kind)
    with pytest.raises(InvalidParameterError) as info:
        AlignConfig(**{name: value})
    expected = str(info.value)
    assert expected.startswith(f"{name} must be ")
    text = " ".join(res.output.split())
    assert f"error: {spec.flag}{expected[len(name):]}" in text, (text, expected)
    assert typed in text  # the value as typed
    assert not (tmp_path / "out").exists()  # nothing written


def test_message_puts_the_flag_only_in_place_of_a_leading_keyword():
    flags = {"alpha": "--alpha", "top_k": "--top-k"}
    assert message(InvalidParameterError("top_k must be x; got 0", param="top_k"), flags) == "--top-k must be x; got 0"
    # a message that does not start with the keyword is left as it is
    text = "the alpha of this run must be x"
    assert message(InvalidParameterError(text, param="alpha"), flags) == text
    # a keyword that is a prefix of another word is not replaced
    assert message(InvalidParameterError("alphas must be x", param="alpha"), flags) == "alphas must be x"
    # a keyword the command does not know stays the keyword
    assert message(InvalidParameterError("beta must be x", param="beta"), flags) == "beta must be x"


def test_optional_numbers_accept_none(tmp_path):
    # top_k and max_memory are declared optional: "none" gives None (every candidate; the default budget)
    res = runner.invoke(app, ["align", str(A), str(B), "-p", str(PRIOR), "-o", str(tmp_path / "out"),
                              "--top-k", "none", "--max-memory", "none", "-q"])
    assert res.exit_code == 0, res.output
    params = json.loads((tmp_path / "out" / "summary.json").read_text())["parameters"]
    assert params["top_k"] is None and params["max_memory"] is None


# --------------------------------------------------------------------------- the decorator itself

def test_command_hands_one_config_object():
    got = {}
    toy = typer.Typer()

    @toy.command()
    @command(Use(LabelConfig, into="labels"), Use(AlignConfig, ("delimiter", "header")))
    def run(name: str, *, labels: LabelConfig, config: AlignConfig):
        got.update(name=name, labels=labels, config=config)

    res = CliRunner().invoke(toy, ["x", "--top-k", "3", "--header", "no"])
    assert res.exit_code == 0, res.output
    assert got["labels"] == LabelConfig(top_k=3) and got["config"] == AlignConfig(header="no")
    res = CliRunner().invoke(toy, ["x"])
    assert got["labels"] == LabelConfig() and got["config"] == AlignConfig()  # defaults from the declarations
    res = CliRunner().invoke(toy, ["x", "--min-similarity", "0"])
    assert res.exit_code == 2 and "--min-similarity must be a number in (0, 1]; got 0.0" in res.output


def test_an_option_declared_twice_is_refused():
    with pytest.raises(TypeError, match="declared twice"):
        command(Use(AlignConfig, ("top_k",)), Use(LabelConfig, into="labels"))(lambda *, config, labels: None)


# --------------------------------------------------------------------------- sweep takes align's options

def _weighted_copy(src: Path, dst: Path) -> Path:
    rows = [line.split("\t") for line in src.read_text().splitlines() if line and not line.startswith("#")]
    rows = [r for r in rows if r[0] not in ("node_a", "source")]
    dst.write_text("".join(f"{u}\t{v.strip()}\t{1 + i % 3}\n" for i, (u, v) in enumerate(rows)))
    return dst


def test_sweep_takes_seeds_directed_weighted_and_no_refine(tmp_path, monkeypatch):
    import aligner.analysis.sweep as sweep_module

    real, seen = sweep_module.sweep, {}

    def spy(*args, **kwargs):
        seen.update(kwargs)
        return real(*args, **kwargs)

    monkeypatch.setattr(sweep_module, "sweep", spy)
    a, b = _weighted_copy(A, tmp_path / "a.tsv"), _weighted_copy(B, tmp_path / "b.tsv")
    seeds = tmp_path / "seeds.tsv"
    seeds.write_text("a1\tb1\n")
    out = tmp_path / "out"
    res = runner.invoke(app, ["sweep", str(a), str(b), "-p", str(PRIOR), "-o", str(out), "--alphas", "0.9,0,0.5",
                              "--seeds", str(seeds), "--directed", "--weighted", "--no-refine", "--truth", str(TRUTH),
                              "-q"])
    assert res.exit_code == 0, res.output
    cfg = seen["config"]
    assert cfg.directed and cfg.weighted and not cfg.refine, cfg
    assert Path(seen["seeds"]) == seeds and list(seen["alphas"]) == [0.9, 0.0, 0.5]
    table = pd.read_csv(out / "sweep.tsv", sep="\t")
    assert table["alpha"].tolist() == [0.0, 0.5, 0.9]  # ascending (the sweep's documented order)
    assert (out / "sweep.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG specification)
    assert b"<svg" in (out / "sweep.svg").read_bytes()[:1000]


def test_sweep_refuses_an_earlier_sweep_before_any_work(tmp_path, monkeypatch):
    import aligner.analysis.sweep as sweep_module

    out = tmp_path / "out"
    out.mkdir()
    (out / "sweep.tsv").write_text("keep\n")
    monkeypatch.setattr(sweep_module, "sweep", lambda *a, **k: pytest.fail("the sweep ran"))
    res = runner.invoke(app, ["sweep", str(A), str(B), "-p", str(PRIOR), "-o", str(out)])
    assert res.exit_code == 2 and "already holds sweep.tsv" in " ".join(res.output.split())
    assert (out / "sweep.tsv").read_text() == "keep\n"


def test_bad_alphas_name_the_option(tmp_path):
    res = runner.invoke(app, ["sweep", str(A), str(B), "-p", str(PRIOR), "-o", str(tmp_path / "o"),
                              "--alphas", "0,high"])
    assert res.exit_code == 2
    assert "error: --alphas must be comma-separated numbers such as 0,0.5,0.9; got '0,high'" in res.output


# --------------------------------------------------------------------------- a quick start

def test_early_exits_do_not_import_the_numerical_stack(tmp_path):
    # common practice for a command line: --help, --version and an error exit for a missing input
    # file load none of numpy, pandas, scipy, numba, matplotlib (fresh interpreter each)
    cases = [["--help"], ["--version"], ["align", "--help"], ["sweep", "--help"],
             ["align", str(tmp_path / "missing.tsv"), str(B), "-o", str(tmp_path / "o")],
             ["align", str(A), str(B), "-o", str(tmp_path / "o"), "--alpha", "2"]]
    for argv in cases:
        code = ("import sys\nfrom aligner.cli import app\n"
                f"sys.argv = ['aligner'] + {argv!r}\n"
                "code = None\ntry:\n    app()\nexcept SystemExit as e:\n    code = e.code\n"
                "heavy = [m for m in ('numpy', 'pandas', 'scipy', 'numba', 'matplotlib') if m in sys.modules]\n"
                "print('HEAVY', ','.join(heavy), 'EXIT', code)\n")
        proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
        last = proc.stdout.strip().splitlines()[-1]
        assert last.startswith("HEAVY  EXIT"), (argv, last, proc.stderr)
        assert last.endswith("EXIT 2" if len(argv) > 2 else "EXIT 0"), (argv, last, proc.stderr)
        if len(argv) > 2 and "missing.tsv" in argv[1]:
            assert "missing.tsv: no such file; check the path" in proc.stderr


def test_sweep_without_alphas_runs_the_default_grid(tmp_path, monkeypatch):
    import aligner.analysis.sweep as sweep_module

    seen = {}

    def spy(*args, **kwargs):
        seen.update(kwargs)
        raise InvalidParameterError("stopped by the test")

    monkeypatch.setattr(sweep_module, "sweep", spy)
    res = runner.invoke(app, ["sweep", str(A), str(B), "-p", str(PRIOR), "-o", str(tmp_path / "o")])
    assert res.exit_code == 2 and "stopped by the test" in res.output
    assert tuple(seen["alphas"]) == tuple(sweep_module.DEFAULT_ALPHAS)
    assert seen["config"] == AlignConfig()  # every other option at its declared default


@pytest.mark.parametrize("cmd", ["align", "sweep", "query", "demo", "score", "report", "prior-from-labels"])
def test_flags_show_no_value_in_the_help(cmd):
    # Issue found in a fresh-clone trial: every flag showed "<bool>" as if it took a value.
    # Common practice (POSIX utility conventions): an option that takes no argument shows none.
    text = _help(cmd)
    assert "<bool>" not in "\n".join(line for line in text.splitlines() if "--help" not in line
                                     and "completion" not in line)


def test_command_reference_page_is_current():
    # docs/commands.md is written from the typer app by scripts/dev/cli_reference.py; an option
    # added or changed without rerunning it would leave the page stale (common practice: a
    # generated document checked against its generator)
    import subprocess
    import sys
    from pathlib import Path

    root = Path(__file__).resolve().parents[2]
    out = subprocess.run([sys.executable, str(root / "scripts" / "dev" / "cli_reference.py"), "--check"],
                         capture_output=True, text=True, cwd=root)
    assert out.returncode == 0, out.stdout + out.stderr


# --------------------------------------------------------------------------- no option takes infinity

def _real_options():
    """Every real-valued option: (class, field, spec, command line without the option)."""
    from aligner.config import ClassConfig, TransferConfig

    a, b, p = str(A), str(B), str(PRIOR)
    commands = [(AlignConfig, ["align", a, b, "-p", p, "-o", "{out}"]),
                (QueryConfig, ["query", a, b, "-p", p, "-n", "a1"]),
                (LabelConfig, ["prior-from-labels", a, b, "-o", "{out}"]),
                (ClassConfig, ["prior-from-classes", a, b, "-o", "{out}"]),
                (TransferConfig, ["transfer", "{out}"])]
    return [(cls, name, spec, argv) for cls, argv in commands for name, (_, spec) in specs(cls).items()
            if spec.kind == "real"]


REALS = _real_options()


@pytest.mark.parametrize("typed", ["inf", "-inf"])
@pytest.mark.parametrize("cls, name, spec, argv", REALS, ids=[f"{r[0].__name__}.{r[1]}" for r in REALS])
def test_no_real_option_takes_infinity(tmp_path, cls, name, spec, argv, typed):
    # Found by fuzzing: options with no upper bound took 'inf' (help "[0, inf)": open at infinity),
    # and align --beta inf died in the assignment kernel, query --seed-weight inf printed "score": null,
    # prior-from-classes --score inf wrote a prior that align then refused. Common practice (as for
    # NaN): a value outside the documented interval is refused before any work, exit 2, naming the option.
    out = tmp_path / "out"
    res = runner.invoke(app, [t.replace("{out}", str(out)) for t in argv] + [spec.flag, typed])
    assert res.exit_code == 2, res.output
    text = " ".join(res.output.split())
    assert "Traceback" not in res.output and f"error: {spec.flag} must be a " in text and f"got {typed}" in text, text
    assert not out.exists()
    with pytest.raises(InvalidParameterError, match=rf"^{name} must be a .*; got -?inf$"):
        cls(**{name: float(typed)})  # the same check from Python, naming the keyword


def test_check_real_refuses_what_is_not_a_finite_number():
    # the check behind every real option: a number outside the floats (an int too large for one)
    # is refused like infinity, not left to raise OverflowError
    from aligner.checks import check_real

    assert check_real(2.5, "x") == 2.5 and check_real(3, "x", low=0.0) == 3.0
    for value in (float("inf"), float("-inf"), float("nan"), 10**400):
        with pytest.raises(InvalidParameterError, match=r"^x must be a finite number; got "):
            check_real(value, "x")


@pytest.mark.parametrize("cmd, extra, advice", [
    ("align", [], "raise --tol, lower --alpha or try --solver power"),
    ("sweep", ["--alphas", "0.5"], "raise --tol, lower --alphas or try --solver power"),
    ("align", ["--solver", "power"], "raise --tol, lower --alpha or try --solver push"),
])
def test_convergence_advice_names_the_options_of_the_command(tmp_path, monkeypatch, cmd, extra, advice):
    # Found by fuzzing: a solve that stopped short said "raise max_work", which no command takes
    # (a keyword of aligner.core.diffusion.diffuse only). Common practice (docs/errors.md): from
    # the command line a message names the options as typed. The work cap is made tiny so the
    # solve stops short at once.
    import aligner.core.diffusion as diffusion

    monkeypatch.setattr(diffusion, "default_work_cap", lambda *args: 3)
    out = tmp_path / "out"
    res = runner.invoke(app, [cmd, str(A), str(B), "-p", str(PRIOR), "-o", str(out), "-q", *extra])
    assert res.exit_code == 2, res.output
    text = " ".join(res.output.split())
    assert "Traceback" not in res.output and text.count("error:") == 1
    assert "stopped before the residual tolerance 1e-06; " + advice + " (stopped after 3 steps" in text, text
    assert "max_work" not in text and not out.exists()


def test_brackets_in_option_help_are_shown():
    # Found by testing: the help is rich markup, which took "[dask]" of "pip install 'aligner[dask]'"
    # for a tag and dropped it (common practice: escape text put into markup)
    got = CliRunner().invoke(app, ["align", "--help"], env={"COLUMNS": "250"})
    assert got.exit_code == 0 and "pip install 'aligner[dask]'" in got.output


@pytest.mark.parametrize("cmd", ["align", "sweep", "query"])
def test_prior_columns_without_a_prior_is_refused(tmp_path, cmd):
    # Common practice (an option with nothing to act on is refused, as the dask options are
    # without --engine dask): --prior-columns without --prior was accepted and ignored, the
    # candidates then coming from structure or seeds. Exit 2, one line, nothing written.
    seeds = tmp_path / "seeds.tsv"
    seeds.write_text("".join(line for line in TRUTH.read_text().splitlines(keepends=True)[:4]))
    args = [cmd, str(A), str(B), "--prior-columns", "1,2,3"]
    args += ["--node", "a2", "--seeds", str(seeds)] if cmd == "query" else ["-o", str(tmp_path / "out")]
    res = runner.invoke(app, args)
    assert res.exit_code == 2, res.output
    assert "--prior-columns picks the columns of the prior table, and no prior is given" in res.output
    assert len(res.output.strip().splitlines()) == 1 and not (tmp_path / "out").exists()


@pytest.mark.parametrize("cmd, extra, said", [
    ("align", ["--weight-model", "product"], "--weight-model says how edge weights enter the walk, and the run is not weighted"),
    ("align", ["--seed-weight", "2"], "--seed-weight is the seeds' share of the diffusion's source, and no seeds are given"),
    ("sweep", ["--structural-weight", "2"], "--structural-weight weighs structural candidates against a prior"),
    ("align", ["--permutation-seed", "3"], "--permutation-seed seeds the random maps of --permutations, and none are drawn"),
    ("align", ["--no-refine", "--refine-starts", "3"], "--refine-starts is an option of the refinement, which --no-refine"),
    ("sweep", ["--no-refine", "--beta", "0.5"], "--beta is an option of the refinement, which --no-refine turns off"),
    ("align", ["--no-refine", "--refine-iter", "5"], "--refine-iter is an option of the refinement, which --no-refine"),
    ("query", ["--no-answer", "--max-region-pairs", "10"], "--max-region-pairs caps the region of an answer, and --no-answer"),
])
def test_an_option_nothing_would_use_is_refused(tmp_path, cmd, extra, said):
    # Common practice (an option with nothing to act on is refused, as the dask options are
    # without --engine dask): each of these was accepted and ignored, the run then doing what the
    # user had not asked. Exit 2, one line, nothing written; with what it needs, it runs.
    out = tmp_path / "out"
    tail = ["-n", "a1"] if cmd == "query" else ["-o", str(out)]
    res = runner.invoke(app, [cmd, str(A), str(B), "-p", str(PRIOR), *tail, *extra])
    assert res.exit_code == 2, res.output
    assert said in " ".join(res.output.split()) and len(res.output.strip().splitlines()) == 1, res.output
    assert not out.exists()


def test_delimiter_help_says_what_the_readers_accept():
    # Checked against the readers' own check (aligner.io): 'space' is accepted, and a quote, '#' and a line
    # break are refused; the help said only "one character" (noticed by differential testing).
    from aligner.errors import InvalidParameterError
    import aligner
    help_text = specs(AlignConfig)["delimiter"][1].help
    assert "space" in help_text and "'#'" in help_text and "quote" in help_text and "line break" in help_text
    for refused in ("#", '"', "\n"):
        with pytest.raises(InvalidParameterError, match="delimiter must be"):
            aligner.align(str(A), str(B), prior=str(PRIOR), delimiter=refused)


@pytest.mark.parametrize("flag", ["--top-k", "--refine-starts", "--max-memory"])
def test_an_empty_value_of_an_optional_number_is_refused_not_taken_as_none(tmp_path, flag):
    # Checked against the help ("Give 'none' for None") and docs/errors.md (an empty value, such as an
    # unset shell variable, is refused as -o "" is): "" was read as None, so --top-k "$K" with K unset
    # silently kept every candidate (noticed by differential testing).
    res = runner.invoke(app, ["align", str(A), str(B), "-p", str(PRIOR), "-o", str(tmp_path / "out"), flag, ""])
    assert res.exit_code == 2, res.output
    assert "Traceback" not in res.output
    assert f"error: {flag} must be " in " ".join(res.output.split()) and "got ''" in res.output
    assert not (tmp_path / "out").exists()


DELIMITER_VALUES = ["tab", "comma", "semicolon", "space", "whitespace", ",", ";", "|", " ", "\t", ":",
                    "ab", "", "Tab", "#", '"', "\n", "\r", "\r\n", "tabs", 7, b",", "\u00e9", "\u2009"]


@pytest.mark.parametrize("value", DELIMITER_VALUES, ids=[repr(v) for v in DELIMITER_VALUES])
def test_delimiter_is_checked_when_the_config_is_made_by_the_readers_rule(tmp_path, value):
    # Reference: the readers' own check (aligner.io.readers.read_table on a real file, with no config): the
    # configuration accepts and refuses exactly what they do, with the same message. AlignConfig(delimiter='ab')
    # was accepted and refused only once a file was read (noticed by differential testing).
    from aligner.io.readers import read_table

    f = tmp_path / "t.tsv"
    f.write_text("x1\tx2\n")
    try:
        read_table(f, min_cols=1, max_cols=3, delimiter=value)
        readers = None
    except InvalidParameterError as exc:
        readers = str(exc)
    try:
        AlignConfig(delimiter=value)
        config = None
    except InvalidParameterError as exc:
        config = str(exc)
    assert config == readers
    assert (readers is None) == (value in DELIMITER_VALUES[:DELIMITER_VALUES.index("ab")])


def test_a_delimiter_outside_ascii_is_refused_naming_the_option(tmp_path):
    # Both readers split at one byte (pyarrow: "Expecting an ASCII character"; pandas' C engine: "the separator
    # encoded in utf-8 is > 1 char long"): --delimiter é passed the check and a file delimited by it ended in
    # that ValueError's traceback (exit 1); now exit 2 naming the option, nothing written (noticed by
    # differential testing)
    files = []
    for name, text in (("a", "a1\u00e9a2\na2\u00e9a3\n"), ("b", "b1\u00e9b2\nb2\u00e9b3\n"),
                       ("p", "a1\u00e9b1\u00e91\na2\u00e9b2\u00e91\n")):
        (tmp_path / f"{name}.txt").write_text(text, encoding="utf-8")
        files.append(str(tmp_path / f"{name}.txt"))
    res = runner.invoke(app, ["align", files[0], files[1], "-p", files[2], "-o", str(tmp_path / "out"),
                              "--delimiter", "\u00e9"])
    assert res.exit_code == 2, res.output
    assert "Traceback" not in res.output and isinstance(res.exception, SystemExit)
    assert "error: --delimiter must be tab, comma, semicolon, space, whitespace or one ASCII character" in \
        " ".join(res.output.split())
    assert not (tmp_path / "out").exists()
    assert "ASCII" in specs(AlignConfig)["delimiter"][1].help


def test_a_bad_delimiter_is_refused_before_any_file_is_read(tmp_path):
    # The check runs when the options are made: the message is the delimiter's even where the files are
    # missing, and nothing is written (noticed by differential testing)
    import aligner

    with pytest.raises(InvalidParameterError, match=r"^delimiter must be tab, comma, semicolon, space, whitespace "
                                                    r"or one ASCII character other than a quote, '#' or a line "
                                                    r"break; got 'ab'$") as err:
        AlignConfig(delimiter="ab")
    assert err.value.param == "delimiter"
    with pytest.raises(InvalidParameterError, match=r"^delimiter must be "):
        aligner.align(str(tmp_path / "missing_a.tsv"), str(tmp_path / "missing_b.tsv"), delimiter="ab")
    res = runner.invoke(app, ["align", str(tmp_path / "missing_a.tsv"), str(tmp_path / "missing_b.tsv"),
                              "-o", str(tmp_path / "out"), "--delimiter", "ab"])
    assert res.exit_code == 2 and "error: --delimiter must be tab, comma" in " ".join(res.output.split())
    assert not (tmp_path / "out").exists()


@pytest.mark.parametrize("cmd, args, flag, must", [
    ("sweep", ["--alphas", ""], "--alphas", "comma-separated numbers such as 0,0.5,0.9"),
    ("sweep", ["--alphas", " , "], "--alphas", "comma-separated numbers such as 0,0.5,0.9"),
    ("align", ["--engine", "dask", "--scheduler", ""], "--scheduler",
     "the address of a running dask scheduler, such as tcp://host:8786"),
    ("align", ["--engine", "dask", "--scheduler", " "], "--scheduler",
     "the address of a running dask scheduler, such as tcp://host:8786"),
])
def test_an_empty_value_of_alphas_or_scheduler_is_refused_not_taken_for_the_default(tmp_path, monkeypatch, cmd,
                                                                                     args, flag, must):
    # Checked against docs/errors.md (an empty value, such as an unset shell variable, is refused naming the
    # option, as -o "" and --top-k "" are): --alphas "" ran the default grid of eleven alphas and --scheduler ""
    # started a local cluster instead of reaching a scheduler (noticed by differential testing). The pipeline
    # must not even start.
    import aligner.analysis.sweep as sweep_module
    import aligner.pipeline as pipeline

    def refuse(*a, **k):
        raise AssertionError("the run started")

    monkeypatch.setattr(sweep_module, "sweep", refuse)
    monkeypatch.setattr(pipeline, "read_inputs", refuse)
    out = tmp_path / "out"
    res = runner.invoke(app, [cmd, str(A), str(B), "-p", str(PRIOR), "-o", str(out), *args])
    assert res.exit_code == 2, res.output
    assert "Traceback" not in res.output and (res.exception is None or isinstance(res.exception, SystemExit))
    assert f"error: {flag} must be {must}; got {args[-1]!r}" in " ".join(res.output.split())
    assert not out.exists()


def test_an_empty_scheduler_is_refused_in_python_too():
    # docs/errors.md: the Python API refuses what the command line refuses, naming the keyword
    from aligner.config import EngineConfig

    with pytest.raises(InvalidParameterError, match=r"^scheduler must be the address of a running dask scheduler, "
                                                    r"such as tcp://host:8786; got ''$") as err:
        EngineConfig(scheduler="")
    assert err.value.param == "scheduler"
    assert EngineConfig(scheduler="tcp://host:8786").scheduler == "tcp://host:8786"
