"""Fuzz the file readers of :mod:`aligner.io.readers` for a fixed time.

Usage::

    python scripts/dev/fuzz_readers.py [--seconds 60] [--engine hypothesis|atheris] [--seed N]

Every generated input is written to a temporary file and read with ``read_network``,
``read_prior`` and ``read_pairs`` under random ``delimiter`` / ``header`` / ``kind`` options.
The contract under test: a reader either returns a well-formed result or raises an
``AlignerError`` whose message names the file (and, when it gives a line, a line >= 1).
Anything else (another exception, a broken invariant of the result) is a crash: the input is
saved under ``tests/regressions/`` as ``<sha1>.input`` (the raw bytes) with a ``<sha1>.json``
beside it (the options, the error and its traceback), and ``tests/cli/test_errors.py`` replays
every saved case.

Engines:

- ``hypothesis`` (default; only needs the test extra): structured text (rows of identifiers
  and numbers, mixed delimiters and line endings, comments, BOM, quotes, NUL and Unicode
  white space, header words), raw bytes and gzip-compressed (sometimes truncated) data, drawn
  by ``hypothesis`` in its generate phase only (no shrinking: the raw input is saved).
- ``atheris`` (optional, ``pip install atheris``): coverage-guided byte fuzzing of the same
  target, the first bytes choosing the options.

The script prints how many inputs it tried and how many crashed (and how many distinct
crashes), and exits 1 when anything crashed.
"""

from __future__ import annotations

import argparse
import gzip
import hashlib
import json
import os
import re
import sys
import tempfile
import time
import traceback
import warnings
from pathlib import Path

import numpy as np

REGRESSIONS = Path(__file__).resolve().parents[2] / "tests" / "regressions"

DELIMITERS = [None, "tab", "comma", "semicolon", "space", "whitespace", "|", ";", "", "ab", '"', "\n", "#", " "]
HEADERS = ["auto", "yes", "no", "maybe"]
KINDS = ["similarity", "evalue", "distance"]


class InvariantError(AssertionError):
    """A reader returned without error but its result breaks a documented invariant."""


def _load() -> None:
    """Import the package lazily, so that the atheris engine can instrument it on import."""
    global AlignerError, _lookup, read_network, read_pairs, read_prior, network_from_edges
    from aligner.errors import AlignerError
    from aligner.core.identifiers import lookup as _lookup
    from aligner.io.readers import read_network, read_pairs, read_prior
    from aligner.core.network import network_from_edges


def _fixed_network():
    names = np.array(sorted(["1", "2", "a", "b", "c", "node_a", "x y", "ß"]), dtype=object)
    return network_from_edges(names, np.array([0, 1, 2, 3]), np.array([1, 2, 3, 4]), source="<fixed>")


def _check_network(net) -> None:
    names = list(net.names)
    if names != sorted(names) or len(set(names)) != len(names):
        raise InvariantError("network names are not sorted and unique")
    if not all(isinstance(s, str) for s in names):
        raise InvariantError("a network name is not a str")
    if len(net.edges):
        if not (net.edges[:, 0] < net.edges[:, 1]).all() or net.edges.max() >= net.n:
            raise InvariantError("network edges are not u < v within range")
    if net.weights is not None and (not np.isfinite(net.weights).all() or (net.weights < 0).any()):
        raise InvariantError("network weights are not finite and >= 0")
    if not np.array_equal(_lookup(net.names, net.names), np.arange(net.n)):
        raise InvariantError("a network name is not found at its own index by the identifier lookup")


def _check_pairs(pairs, na, nb) -> None:
    if len(pairs) and (pairs.min() < 0 or pairs[:, 0].max() >= na or pairs[:, 1].max() >= nb):
        raise InvariantError("pair indices out of range")


def _check_error(exc: AlignerError, path: str) -> None:
    msg = str(exc)
    line = getattr(exc, "line", None)
    if line is not None and line < 1:
        raise InvariantError(f"error message gives line {line}: {msg}")
    if getattr(exc, "path", None) is not None and path not in msg:
        raise InvariantError(f"error message does not name the file: {msg}")


def _read_all(path: str, opts: dict) -> list:
    """Call every reader on ``path``; return a comparable record of what each gave."""
    delimiter, header, kind = opts.get("delimiter"), opts.get("header", "auto"), opts.get("kind", "similarity")
    out = []
    net = None
    try:
        net = read_network(path, delimiter=delimiter, header=header)
        _check_network(net)
        out.append(("network", tuple(net.names), net.edges.tolist(),
                    None if net.weights is None else net.weights.tolist()))
    except AlignerError as exc:
        _check_error(exc, path)
        out.append(("network", type(exc).__name__, str(exc)))
    base = net if net is not None and net.n else _fixed_network()
    try:
        pr = read_prior(path, base, base, kind=kind, delimiter=delimiter, header=header)
        _check_pairs(pr.pairs, base.n, base.n)
        if not np.isfinite(pr.scores).all() or (pr.scores < 0).any():
            raise InvariantError("prior scores are not finite and >= 0")
        out.append(("prior", pr.pairs.tolist(), pr.scores.tolist(), pr.n_rows, pr.n_unknown, pr.n_duplicates))
    except AlignerError as exc:
        _check_error(exc, path)
        out.append(("prior", type(exc).__name__, str(exc)))
    try:
        pt = read_pairs(path, base, base, delimiter=delimiter, header=header)
        _check_pairs(pt.pairs, base.n, base.n)
        out.append(("pairs", pt.pairs.tolist(), pt.n_rows, pt.n_unknown))
    except AlignerError as exc:
        _check_error(exc, path)
        out.append(("pairs", type(exc).__name__, str(exc)))
    return out


def run_one(data: bytes, opts: dict) -> list:
    """Read ``data`` with every reader under ``opts``; return what each call gave.

    Raises any exception that is not an ``AlignerError``, or an InvariantError (a broken
    invariant, or the fast reader and the careful reader disagreeing on the same file); this
    is the crash the fuzzer looks for. Used by the regression test as well.
    """
    if "read_network" not in globals():
        _load()
    import aligner.io.readers as aio

    with tempfile.TemporaryDirectory(prefix="aligner-fuzz-") as d, warnings.catch_warnings():
        warnings.simplefilter("ignore")
        path = os.path.join(d, "input" + opts.get("suffix", ".tsv"))
        with open(path, "wb") as fh:
            fh.write(data)
        outcome = _read_all(path, opts)
        fast = getattr(aio, "_read_arrow", None)
        if fast is not None:  # differential check: the careful reader alone must agree
            aio._read_arrow = lambda *a, **k: None
            try:
                careful = _read_all(path, opts)
            finally:
                aio._read_arrow = fast
            for got, ref in zip(outcome, careful):
                if got != ref:
                    raise InvariantError(f"fast and careful readers disagree on the {got[0]}: "
                                         f"{str(got)[:300]} != {str(ref)[:300]}")
    return outcome


class Stats:
    def __init__(self, save: bool, save_dir: Path = REGRESSIONS):
        self.tried = 0
        self.crashed = 0
        self.kinds: dict[str, str] = {}  # crash signature -> saved file
        self.save = save
        self.save_dir = Path(save_dir)

    def run(self, data: bytes, opts: dict) -> None:
        self.tried += 1
        try:
            run_one(data, opts)
        except AlignerError:
            raise  # cannot happen: run_one catches them
        except Exception as exc:  # noqa: BLE001 - anything but an AlignerError is a crash
            self.crashed += 1
            frame = traceback.extract_tb(exc.__traceback__)[-1]
            sig = f"{type(exc).__name__} at {Path(frame.filename).name}:{frame.lineno}"
            if isinstance(exc, InvariantError):  # one kind per broken invariant, not per line
                sig = f"InvariantError: {str(exc).split(':')[0]}"
            if sig not in self.kinds:
                self.kinds[sig] = self._save(data, opts, exc) if self.save else ""
                print(f"crash #{len(self.kinds)}: {type(exc).__name__}: {str(exc)[:300]}", file=sys.stderr,
                      flush=True)

    def _save(self, data: bytes, opts: dict, exc: BaseException) -> str:
        """Write the input and a JSON note (options, error, call sites by file name only)."""
        self.save_dir.mkdir(parents=True, exist_ok=True)
        sha = hashlib.sha1(data + json.dumps(opts, sort_keys=True).encode()).hexdigest()[:16]
        error = re.sub(r"[^\s'\"]*aligner-fuzz-\w+[/\\]input\.\w+", "<input>", f"{type(exc).__name__}: {exc}")
        where = [f"{Path(f.filename).name}:{f.lineno} in {f.name}" for f in traceback.extract_tb(exc.__traceback__)]
        (self.save_dir / f"{sha}.input").write_bytes(data)
        (self.save_dir / f"{sha}.json").write_text(json.dumps({
            "options": opts, "error": error[:2000], "where": where[-8:]}, indent=2, ensure_ascii=True) + "\n")
        return str(self.save_dir / f"{sha}.input")


# --------------------------------------------------------------------------- hypothesis engine

def _strategies():
    from hypothesis import strategies as st

    chars = st.sampled_from(list("abcxyzAB019_-.+e") + [
        "\t", ",", ";", " ", '"', "'", "#", "|", "\\", "[", "]", "/", "\u00a0", "\x00", "\x0c", "\x0b",
        "\u2028", "\x85", "\x1c", "\u3000", "é", "ß", "☃", "𝔘", "\ufeff", "\r", "\n"])
    ident = st.one_of(
        st.text(chars, max_size=8),
        st.sampled_from(["node_a", "node_b", "score", "source", "target", "weight", "evalue", "nan", "NaN",
                         "inf", "-inf", "NA", "null", "None", "", '""', '"a\tb"', '"a', "x" * 300]),
        st.text(max_size=6))
    number = st.one_of(
        st.floats().map(repr), st.integers().map(str),
        st.sampled_from(["1e400", "-0", "0x1p3", "1_000", "1,5", " 1", "1 ", "+.5", "1e-400", "0", "1",
                         "-1", "5e-324", "2", "0.5", "10"]))
    field = st.one_of(ident, number, number)
    row = st.lists(field, max_size=5)
    delim = st.sampled_from(["\t", ",", ";", " ", "  ", "\t ", "|"])
    eol = st.sampled_from(["\n", "\r\n", "\r", "\n\n"])

    @st.composite
    def structured(draw):
        common = draw(delim)
        file_eol = draw(eol)
        lines = []
        for r in draw(st.lists(row, max_size=12)):
            k = draw(st.integers(0, 9))
            if k == 0:
                lines.append("#" + draw(st.text(chars, max_size=10)))
            elif k == 1:
                lines.append(draw(st.sampled_from(["", "  ", "\t", "\u00a0"])))
            else:
                lines.append((draw(delim) if k == 2 else common).join(r))
        seps = [draw(eol) if draw(st.integers(0, 7)) == 0 else file_eol for _ in lines]
        text = "".join(l + s for l, s in zip(lines, seps))
        if lines and draw(st.booleans()):
            text = text[: -len(seps[-1])]  # no final line ending
        if draw(st.integers(0, 5)) == 0:
            text = "\ufeff" + text
        enc = draw(st.sampled_from(["utf-8"] * 8 + ["utf-16", "latin-1"]))
        data = text.encode(enc, errors="replace")
        if draw(st.integers(0, 5)) == 0:
            data = gzip.compress(data)
            if draw(st.booleans()):
                data = data[: draw(st.integers(0, len(data)))]
        return data

    raw = st.one_of(st.binary(max_size=300), st.binary(max_size=60).map(lambda b: b"\x1f\x8b" + b))
    opts = st.fixed_dictionaries({
        "delimiter": st.sampled_from(DELIMITERS[:6] * 3 + DELIMITERS[6:]),
        "header": st.sampled_from(HEADERS[:3] * 3 + HEADERS[3:]),
        "kind": st.sampled_from(KINDS),
        "suffix": st.sampled_from([".tsv", ".csv", ".gz", ".txt"]),
    })
    return st.tuples(st.one_of(structured(), structured(), structured(), raw), opts)


def fuzz_hypothesis(stats: Stats, seconds: float, seed: int) -> None:
    from hypothesis import HealthCheck, Phase, given, seed as hseed, settings

    case = _strategies()
    end = time.monotonic() + seconds

    @settings(max_examples=200, phases=[Phase.generate], database=None, deadline=None,
              suppress_health_check=list(HealthCheck))
    @given(case)
    def batch(c):
        if time.monotonic() < end:
            stats.run(*c)

    k = 0
    while time.monotonic() < end:
        hseed(seed + k)(batch)()
        k += 1


# --------------------------------------------------------------------------- atheris engine

def fuzz_atheris(stats: Stats, seconds: float, seed: int) -> None:
    import atheris

    with atheris.instrument_imports(include=["aligner"]):
        _load()

    def target(data: bytes) -> None:
        if len(data) < 3:
            return
        opts = {"delimiter": DELIMITERS[data[0] % len(DELIMITERS)], "header": HEADERS[data[1] % len(HEADERS)],
                "kind": KINDS[data[2] % len(KINDS)], "suffix": ".tsv"}
        stats.run(data[3:], opts)

    end = time.monotonic() + seconds

    def timed(data: bytes) -> None:
        target(data)
        if time.monotonic() > end:
            print(f"engine atheris, {seconds:.0f} s", flush=True)
            report(stats)
            os._exit(1 if stats.crashed else 0)

    atheris.Setup([sys.argv[0], f"-seed={seed or 1}", "-max_len=512", "-print_final_stats=0"], timed)
    atheris.Fuzz()


def report(stats: Stats) -> None:
    print(f"tried {stats.tried} inputs, {stats.crashed} crashed ({len(stats.kinds)} distinct)", flush=True)
    for sig, where in stats.kinds.items():
        print(f"  {sig}" + (f" -> {where}" if where else ""), flush=True)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--seconds", type=float, default=60.0, help="how long to fuzz (default 60)")
    ap.add_argument("--engine", choices=["hypothesis", "atheris"], default="hypothesis")
    ap.add_argument("--seed", type=int, default=0)
    ap.add_argument("--no-save", action="store_true", help="do not save crashing inputs")
    ap.add_argument("--save-dir", type=Path, default=REGRESSIONS,
                    help="where to save crashing inputs (default: tests/regressions/)")
    args = ap.parse_args(argv)
    stats = Stats(save=not args.no_save, save_dir=args.save_dir)
    t0 = time.monotonic()
    if args.engine == "atheris":
        fuzz_atheris(stats, args.seconds, args.seed)
    else:
        fuzz_hypothesis(stats, args.seconds, args.seed)
    print(f"engine {args.engine}, {time.monotonic() - t0:.0f} s", flush=True)
    report(stats)
    return 1 if stats.crashed else 0


if __name__ == "__main__":
    sys.exit(main())
