"""summary.json against its JSON Schema (docs/summary.schema.json), validated with the jsonschema
library (the reference implementation of JSON Schema, draft 2020-12), for every kind of run the
schema describes: the demo from the command line, directed and weighted, seeds without a prior,
structural candidates, no truth table and no permutations, and refinement off."""

import json
from pathlib import Path

import jsonschema
import networkx as nx
import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

import aligner
from aligner.cli.app import app
from aligner.io.outputs import json_text

# the random pairs below leave a few nodes isolated and repeat a few prior pairs: the warnings
# that say so are expected here and not what is tested
pytestmark = pytest.mark.filterwarnings("ignore::aligner.errors.AlignerWarning")

ROOT = Path(__file__).resolve().parents[1]
SCHEMA = json.loads((ROOT / "docs" / "summary.schema.json").read_text(encoding="utf-8"))
DEMO = ROOT / "demo_pairs" / "firefly"


def _validate(summary: dict) -> None:
    # summary.json as written: through the writer's JSON text (non-finite numbers become null)
    jsonschema.validate(json.loads(json_text(summary)), SCHEMA, cls=jsonschema.Draft202012Validator)


def _pair(seed=0, n=80, weighted=False, directed=False):
    rng = np.random.default_rng(seed)
    g = nx.gnm_random_graph(n, 3 * n, seed=seed, directed=directed)
    perm = rng.permutation(n)
    rows = [(f"a{u}", f"a{v}") + ((float(rng.integers(1, 5)),) if weighted else ()) for u, v in g.edges()]
    a = pd.DataFrame(rows)
    b = pd.DataFrame([(f"b{perm[int(u[1:])]}", f"b{perm[int(v[1:])]}", *w) for u, v, *w in rows])
    prior = pd.DataFrame([(f"a{i}", f"b{perm[i]}", 1.0) for i in range(n)]
                         + [(f"a{i}", f"b{j}", 0.5) for i in range(n) for j in rng.integers(0, n, 3)])
    truth = pd.DataFrame([(f"a{i}", f"b{perm[i]}") for i in range(n)])
    return a, b, prior, truth


def test_schema_is_a_valid_draft_2020_12_schema():
    jsonschema.Draft202012Validator.check_schema(SCHEMA)


def test_demo_summary_written_by_the_command_line_is_valid(tmp_path):
    res = CliRunner().invoke(app, ["align", str(DEMO / "network_a.tsv"), str(DEMO / "network_b.tsv"), "--prior",
                                   str(DEMO / "prior.tsv"), "--truth", str(DEMO / "truth.tsv"), "-o",
                                   str(tmp_path / "out"), "-q", "--permutations", "20"])
    assert res.exit_code == 0, res.output
    jsonschema.validate(json.loads((tmp_path / "out" / "summary.json").read_text()), SCHEMA,
                        cls=jsonschema.Draft202012Validator)


@pytest.mark.parametrize("kind", ["directed-weighted", "seeds-no-prior", "structural", "no-truth-no-refine"])
def test_other_kinds_of_run_are_valid(kind):
    if kind == "directed-weighted":
        a, b, prior, truth = _pair(1, weighted=True, directed=True)
        res = aligner.align(a, b, prior, truth=truth, directed=True, weighted=True)
        assert res.summary["scores"]["directed"] is True and "weighted_ec" in res.summary["scores"]
    elif kind == "seeds-no-prior":
        a, b, prior, truth = _pair(2)
        res = aligner.align(a, b, None, seeds=truth.iloc[:20], truth=truth)
        assert res.summary["seeds"] and res.summary["inputs"]["prior"] is None
    elif kind == "structural":
        a, b, prior, truth = _pair(3)
        res = aligner.align(a, b, None, truth=truth)
        assert res.summary["structural"] is not None
    else:
        a, b, prior, truth = _pair(4)
        res = aligner.align(a, b, prior, refine=False, permutations=0)
        assert res.summary["refine"] is None and res.summary["scores"]["nc"] is None
    _validate(res.summary)


def test_schema_refuses_what_the_format_does_not_allow():
    # the schema is not vacuous: a missing section, an unknown key and a score out of range fail
    a, b, prior, truth = _pair(5)
    good = json.loads(json_text(aligner.align(a, b, prior, truth=truth).summary))
    for broken in ({k: v for k, v in good.items() if k != "scores"},
                   good | {"surprise": 1},
                   good | {"scores": good["scores"] | {"ec": 1.5}}):
        with pytest.raises(jsonschema.ValidationError):
            jsonschema.validate(broken, SCHEMA, cls=jsonschema.Draft202012Validator)
