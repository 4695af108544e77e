"""aligner update: the same result as align on the new inputs, from a previous run's state.

Reference: aligner.align on the new inputs from zero (itself checked against scipy and
networkx elsewhere); two runs agree when their matchings are the same pairs and their
diffusion scores differ by at most the sum of their certified bounds (summary error_bound_l1).
"""

import dataclasses
import json
import re
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

import aligner
from aligner.analysis.update import update
from aligner.cli.app import app
from aligner.datasets.instances import as_frames, noisy_relabelled
from aligner.errors import InputFormatError, InvalidParameterError
from aligner.io.outputs import json_text, write_outputs

runner = CliRunner()


@pytest.fixture(scope="module")
def base(tmp_path_factory):
    d = tmp_path_factory.mktemp("update")
    pair = noisy_relabelled(1500, seed=21, noise=0.05, decoys=8)
    a, b, prior, truth = as_frames(pair)
    for name, frame in (("a.tsv", a), ("b.tsv", b), ("p.tsv", prior)):
        frame.to_csv(d / name, sep="\t", index=False)
    res = aligner.align(d / "a.tsv", d / "b.tsv", d / "p.tsv")
    write_outputs(d / "run", res)
    return d, a, b, prior


def _pairs(res):
    c = res.candidates.pairs[res.matching.index]
    return set(zip(res.network_a.names[c[:, 0]], res.network_b.names[c[:, 1]]))


def _scores(res):
    c = res.candidates.pairs
    return dict(zip(zip(res.network_a.names[c[:, 0]], res.network_b.names[c[:, 1]]), res.diffusion.x))


def _agree(upd, ref):
    assert _pairs(upd) == _pairs(ref)
    su, sr = _scores(upd), _scores(ref)
    assert su.keys() == sr.keys()
    bound = upd.diffusion.error_bound + ref.diffusion.error_bound  # 1-norm bounds, so entry-wise too
    assert max(abs(su[k] - sr[k]) for k in su) <= bound
    # the product graph, patched or built, is align's (the same numbering when the nodes are the same)
    if (np.array_equal(upd.network_a.names, ref.network_a.names) and np.array_equal(upd.network_b.names, ref.network_b.names)
            and np.array_equal(upd.candidates.pairs, ref.candidates.pairs)):
        np.testing.assert_array_equal(upd.product.indptr, ref.product.indptr)
        np.testing.assert_array_equal(upd.product.indices, ref.product.indices)


def _write(d, name, frame):
    frame.to_csv(d / name, sep="\t", index=False)
    return d / name


def test_edges_of_b_rewired(base):
    d, a, b, prior = base
    rng = np.random.default_rng(0)
    b2 = b.copy()
    rows = rng.choice(len(b2), 8, replace=False)  # about 0.1 % of the edges moved
    b2.iloc[rows, 1] = rng.choice(b2.iloc[:, 0].unique(), len(rows))
    new_b = _write(d, "b_rewired.tsv", b2)
    upd = update(d / "run", network_b=new_b)
    ref = aligner.align(d / "a.tsv", new_b, d / "p.tsv")
    _agree(upd, ref)
    u = upd.summary["update"]
    assert u["mode"] == "incremental"
    assert u["changes"]["edges_b_added"] > 0 and u["changes"]["edges_b_removed"] > 0
    assert u["changes"]["edges_a_added"] == u["changes"]["edges_a_removed"] == 0
    assert u["pushes"] < u["previous_pushes"]  # the warm start saves work
    # no node came or went, so the candidate pairs are the same: the product graph is patched
    assert u["changes"]["nodes_b_added"] == u["changes"]["nodes_b_removed"] == 0
    assert u["product"]["mode"] == "patched" and 0 < u["product"]["pairs_rebuilt"] < upd.candidates.m


def test_edges_of_a_removed_and_nodes_added_with_prior_rows(base):
    d, a, b, prior = base
    a2 = a.iloc[10:].copy()  # edges removed (some nodes may go with them)
    new_nodes = [f"new{i}" for i in range(15)]
    rng = np.random.default_rng(1)
    old_nodes = a.iloc[:, 0].unique()
    extra = {"node_a": new_nodes, "node_b": list(rng.choice(old_nodes, 15))}
    a2 = pd.concat([a2, pd.DataFrame(extra)], ignore_index=True)
    b_nodes = b.iloc[:, 0].unique()
    p2 = pd.concat([prior, pd.DataFrame({"node_a": new_nodes, "node_b": list(rng.choice(b_nodes, 15)),
                                         "score": rng.random(15) + 0.5})], ignore_index=True)
    new_a, new_p = _write(d, "a_changed.tsv", a2), _write(d, "p_grown.tsv", p2)
    upd = update(d / "run", network_a=new_a, prior=new_p)
    ref = aligner.align(new_a, d / "b.tsv", new_p)
    _agree(upd, ref)
    c = upd.summary["update"]["changes"]
    assert c["nodes_a_added"] == 15 and c["edges_a_removed"] >= 10 and c["candidates_added"] >= 15
    assert upd.summary["update"]["product"] == {"mode": "built", "reason": "the nodes or the candidate pairs changed"}


def test_prior_rows_rescored(base):
    d, a, b, prior = base
    p2 = prior.copy()
    rows = np.random.default_rng(2).choice(len(p2), len(p2) // 100, replace=False)
    p2.loc[rows, "score"] = p2.loc[rows, "score"] * 1.7
    new_p = _write(d, "p_rescored.tsv", p2)
    upd = update(d / "run", prior=new_p)
    ref = aligner.align(d / "a.tsv", d / "b.tsv", new_p)
    _agree(upd, ref)
    assert upd.summary["update"]["changes"]["candidates_rescored"] > 0


def test_a_large_change_starts_from_zero_and_says_so(base):
    d, a, b, prior = base
    b2 = b.sample(frac=0.6, random_state=3)
    new_b = _write(d, "b_halved.tsv", b2)
    upd = update(d / "run", network_b=new_b)
    assert upd.summary["update"]["mode"] == "full" and "started from zero" in upd.summary["update"]["reason"]
    _agree(upd, aligner.align(d / "a.tsv", new_b, d / "p.tsv"))


def test_a_damaged_state_or_another_option_is_refused(base, tmp_path):
    d, a, b, prior = base
    raw = (d / "run" / "state.npz").read_bytes()
    bad = tmp_path / "bad"
    bad.mkdir()
    # the scores edited and saved again with the old record: the checksum no longer matches
    with np.load(d / "run" / "state.npz") as z:
        arrays = {k: z[k] for k in z.files}
    arrays["x"] = arrays["x"].copy()
    arrays["x"][0] += 1.0
    with open(bad / "state.npz", "wb") as fh:
        np.savez(fh, **arrays)
    with pytest.raises(InputFormatError, match="checksum"):
        update(bad)
    # a truncated file
    (bad / "state.npz").write_bytes(raw[: len(raw) // 2])
    with pytest.raises(InputFormatError, match="not a readable run state"):
        update(bad)
    with pytest.raises(InvalidParameterError, match="alpha"):
        update(d / "run", alpha=0.5)
    with pytest.raises(InputFormatError, match="missing"):
        update(tmp_path)
    # common practice: a wrong PREVIOUS says what is expected, not a library's internals
    with pytest.raises(InputFormatError, match="no such run"):
        update(tmp_path / "nowhere")
    (tmp_path / "a.tsv").write_text("u\tv\n")
    with pytest.raises(InputFormatError, match="not a readable run state .not a state.npz") as err:
        update(tmp_path / "a.tsv")
    assert "pickle" not in str(err.value)


def test_the_command_writes_the_files_and_refuses_cleanly(base, tmp_path):
    d, a, b, prior = base
    got = runner.invoke(app, ["update", str(d / "run"), "--b", str(d / "b.tsv"), "-o", str(tmp_path / "u")])
    assert got.exit_code == 0, got.output
    summary = json.loads((tmp_path / "u" / "summary.json").read_text())
    assert summary["update"]["matches_changed"] == 0 and summary["update"]["changes"]["edges_b_added"] == 0
    assert (tmp_path / "u" / "state.npz").is_file()  # an update keeps a state for the next one
    # the line says what changed, candidates removed too, each noun with its number (a user trial
    # read "1 edges", and "0 ... added" where the change removed candidates)
    assert re.search(r"update \(\w+\): 0 edges of A and 0 of B changed, 0 candidate pairs added, 0 removed, "
                     r"0 rescored; [\d,]+ push(es)? against [\d,]+; 0 matches changed", got.output), got.output
    # a previous input that changed since the run, and not given: exit 2, nothing written
    run2 = tmp_path / "run2"
    src = tmp_path / "a_moving.tsv"
    a.to_csv(src, sep="\t", index=False)
    assert runner.invoke(app, ["align", str(src), str(d / "b.tsv"), "-p", str(d / "p.tsv"), "-o", str(run2),
                               "--quiet"]).exit_code == 0
    a.iloc[5:].to_csv(src, sep="\t", index=False)
    got = runner.invoke(app, ["update", str(run2), "-o", str(tmp_path / "u2")])
    assert got.exit_code == 2 and "changed since" in got.output
    assert not (tmp_path / "u2").exists() or not any((tmp_path / "u2").iterdir())


def test_the_update_section_follows_the_schema(base):
    # Reference: docs/summary.schema.json, checked with jsonschema (Draft 2020-12).
    import jsonschema

    from aligner.io.outputs import json_text

    d, a, b, prior = base
    schema = json.loads((__import__("pathlib").Path(__file__).parents[2] / "docs" / "summary.schema.json").read_text())
    upd = update(d / "run")
    jsonschema.validate(json.loads(json_text(upd.summary)), schema, cls=jsonschema.Draft202012Validator)
    assert upd.summary["update"]["changes"]["candidates_added"] == 0


def test_no_state_leaves_the_state_out(base, tmp_path):
    # Common practice: an opt-out for a large file most runs do not need.
    d, a, b, prior = base
    got = runner.invoke(app, ["align", str(d / "a.tsv"), str(d / "b.tsv"), "-p", str(d / "p.tsv"), "-o",
                              str(tmp_path / "r"), "--no-state", "--quiet"])
    assert got.exit_code == 0, got.output
    assert (tmp_path / "r" / "summary.json").is_file() and not (tmp_path / "r" / "state.npz").exists()
    got = runner.invoke(app, ["update", str(tmp_path / "r"), "-o", str(tmp_path / "u")])
    assert got.exit_code == 2 and "state.npz is missing" in got.output


def _diff_against_edited_file(d, b, gone, new, tmp_path):
    """update with the edges ``gone`` removed from B and ``new`` added, checked against align on
    the edited file: the same alignment, and B built from the state's edges and the diff alone
    equal to B read from the edited file. Returns the update's result."""
    _write(tmp_path, "gone.tsv", gone)
    _write(tmp_path, "new.tsv", new)
    edited = pd.concat([b.drop(index=gone.index), new.set_axis(b.columns, axis=1)], ignore_index=True)
    upd = update(d / "run", add_b=tmp_path / "new.tsv", remove_b=tmp_path / "gone.tsv")
    ref = aligner.align(d / "a.tsv", _write(tmp_path, "b_edited.tsv", edited), d / "p.tsv")
    _agree(upd, ref)
    _same_network(upd.network_b, ref.network_b)
    # the changes a diff names (taken from the diff) are those found by comparing the previous
    # network with the edited file whole, and reach the same rows of the product graph and the
    # same candidates of the continued search
    whole = update(d / "run", network_b=tmp_path / "b_edited.tsv").summary["update"]
    assert upd.summary["update"]["changes"] == whole["changes"]
    assert upd.summary["update"]["product"] == whole["product"]
    assert upd.summary["update"]["refine"] == whole["refine"]
    return upd


def test_edge_diffs_give_what_the_edited_network_gives(base, tmp_path):
    # Reference: aligner.align on the whole edited network file (the previous file with the diff
    # applied by hand).
    d, a, b, prior = base
    rng = np.random.default_rng(7)
    gone = b.iloc[rng.choice(len(b), 12, replace=False)]
    nodes = b.iloc[:, 0].unique()
    new = pd.DataFrame({"node_a": rng.choice(nodes, 12), "node_b": [f"extra{i}" for i in range(12)]})
    upd = _diff_against_edited_file(d, b, gone, new, tmp_path)
    c = upd.summary["update"]["changes"]
    assert c["edges_b_removed"] == 12 and c["edges_b_added"] == 12 and c["nodes_b_added"] == 12
    # new nodes of B without candidates: the pairs keep their numbering, so the graph is patched
    # (and found equal to align's above)
    assert upd.summary["update"]["product"]["mode"] == "patched"
    # a diff that does not fit: an edge to remove that B does not have; exit 2, nothing written
    _write(tmp_path, "absent.tsv", new)
    with pytest.raises(InputFormatError, match="does not have"):
        update(d / "run", remove_b=tmp_path / "absent.tsv")
    got = runner.invoke(app, ["update", str(d / "run"), "--remove-b", str(tmp_path / "absent.tsv"), "-o",
                              str(tmp_path / "u")])
    assert got.exit_code == 2 and "does not fit" in got.output and not (tmp_path / "u").exists()
    with pytest.raises(InvalidParameterError, match="not both"):
        update(d / "run", network_b=d / "b.tsv", add_b=tmp_path / "new.tsv")


def test_edge_diffs_between_known_nodes_give_what_the_edited_network_gives(base, tmp_path):
    # Reference as above; here the diff names no new node (edges moved between nodes B has), so
    # the previous numbering of B is kept as it is
    d, a, b, prior = base
    rng = np.random.default_rng(11)
    have = {tuple(sorted(e)) for e in b.to_numpy().tolist()}
    nodes = np.unique(b.to_numpy().astype(str))
    gone = b.iloc[rng.choice(len(b), 8, replace=False)]
    new = []
    while len(new) < 8:
        u, v = rng.choice(nodes, 2, replace=False)
        if tuple(sorted((u, v))) not in have and (u, v) not in new and (v, u) not in new:
            new.append((u, v))
    new = pd.DataFrame(new, columns=["node_a", "node_b"])
    upd = _diff_against_edited_file(d, b, gone, new, tmp_path)
    c = upd.summary["update"]["changes"]
    assert c["edges_b_removed"] == 8 and c["edges_b_added"] == 8 and c["nodes_b_added"] == 0
    # the same nodes and candidates: the product graph patched (and found equal to align's above)
    assert upd.summary["update"]["product"]["mode"] == "patched"


def test_reversed_arcs_count_as_changed_in_a_directed_run(base, tmp_path):
    # Common practice: in a directed network (u, v) and (v, u) are different arcs, so reversing
    # arcs removes some and adds as many (the counts once keyed arcs by their ends in order).
    d, a, b, prior = base
    assert runner.invoke(app, ["align", str(d / "a.tsv"), str(d / "b.tsv"), "-p", str(d / "p.tsv"), "--directed",
                               "-o", str(tmp_path / "r"), "--quiet"]).exit_code == 0
    once = b.drop_duplicates()
    pairs = set(map(tuple, once.to_numpy()))
    flip = [i for i, (u, v) in enumerate(once.to_numpy()) if (v, u) not in pairs][:5]
    b2 = once.copy()
    b2.iloc[flip] = b2.iloc[flip, ::-1].to_numpy()
    upd = update(tmp_path / "r", network_b=_write(tmp_path, "b_flipped.tsv", b2))
    c = upd.summary["update"]["changes"]
    assert c["edges_b_added"] == 5 and c["edges_b_removed"] == 5
    assert upd.summary["update"]["product"]["mode"] == "patched"  # out-lists, checked against align's below
    _agree(upd, aligner.align(d / "a.tsv", tmp_path / "b_flipped.tsv", d / "p.tsv", directed=True))


def test_the_product_graph_is_built_again_where_a_patch_would_not_do(base, tmp_path, monkeypatch):
    # A weighted run keeps no product graph (its entry weights are not in the state), and a change
    # reaching more rows than PATCH_SHARE builds the graph whole; either way align's graph.
    import aligner.analysis.update as update_module
    d, a, b, prior = base
    rng = np.random.default_rng(5)
    aw, bw = a.assign(w=rng.random(len(a)) + 0.5), b.assign(w=rng.random(len(b)) + 0.5)
    files = [_write(tmp_path, "aw.tsv", aw), _write(tmp_path, "bw.tsv", bw)]
    write_outputs(tmp_path / "w", aligner.align(*files, d / "p.tsv", weighted=True))
    bw2 = bw.copy()
    bw2.iloc[:5, 2] *= 2.0  # five weights changed, no edge
    upd = update(tmp_path / "w", network_b=_write(tmp_path, "bw2.tsv", bw2))
    assert upd.summary["update"]["product"] == {"mode": "built",
                                                "reason": "the run is weighted (its entry weights are not kept)"}
    _agree(upd, aligner.align(files[0], tmp_path / "bw2.tsv", d / "p.tsv", weighted=True))
    monkeypatch.setattr(update_module, "PATCH_SHARE", 0.0)
    b2 = b.drop(index=b.index[:3])
    upd = update(d / "run", network_b=_write(tmp_path, "b_less.tsv", b2))
    assert upd.summary["update"]["changes"]["nodes_b_removed"] == 0  # the pairs stay: only the share says built
    assert upd.summary["update"]["product"]["mode"] == "built"
    assert "of the candidates' rows (more than 0%)" in upd.summary["update"]["product"]["reason"]
    _agree(upd, aligner.align(d / "a.tsv", tmp_path / "b_less.tsv", d / "p.tsv"))


def _same_network(got, want):
    """Every field of two Networks equal (arrays entry for entry), the source aside."""
    import dataclasses

    for f in dataclasses.fields(want):
        if f.name == "source":
            continue
        g, w = getattr(got, f.name), getattr(want, f.name)
        if isinstance(w, np.ndarray) or isinstance(g, np.ndarray):
            assert g is not None and w is not None and np.array_equal(g, w), f.name
        else:
            assert g == w, f.name


@pytest.mark.parametrize("directed, top_k", [(False, None), (True, None), (False, 3)])
def test_unchanged_inputs_come_from_the_state_as_reading_gives_them(base, tmp_path, monkeypatch, directed, top_k):
    # Reference: aligner.align reading the same files. The update takes network A and the prior
    # from the state (neither file is read again: the readers are watched) and must get the same
    # network, field for field, the same candidates with the same prior, and the same record of
    # the inputs in summary.json, self-loops and repeated edges of the file included; with a top-k
    # cut that drops prior pairs (choosing the candidates again from the kept ones keeps them all).
    import aligner.io.inputs as inputs_module

    d, a, b, prior = base
    a2 = pd.concat([a, a.iloc[:7], pd.DataFrame({a.columns[0]: a.iloc[:3, 0], a.columns[1]: a.iloc[:3, 0]})])
    _write(tmp_path, "a_loops.tsv", a2)
    p_dup = _write(tmp_path, "p_dup.tsv", pd.concat([prior, prior.iloc[:5]]))  # 5 repeated rows
    opts = (["--directed"] if directed else []) + ([] if top_k is None else ["--top-k", str(top_k)])
    assert runner.invoke(app, ["align", str(tmp_path / "a_loops.tsv"), str(d / "b.tsv"), "-p", str(p_dup),
                               *opts, "-o", str(tmp_path / "r"), "--quiet"]).exit_code == 0
    rng = np.random.default_rng(4)
    b2 = b.copy()
    rows = rng.choice(len(b2), 6, replace=False)
    b2.iloc[rows, 1] = b2.iloc[(rows + 1) % len(b2), 1].to_numpy()  # ends moved among nodes B has anyway
    new_b = _write(tmp_path, "b2.tsv", b2)
    read = []
    real_net, real_table = inputs_module.read_network, inputs_module.as_table
    monkeypatch.setattr(inputs_module, "read_network", lambda path, **kw: read.append(str(path)) or
                        real_net(path, **kw))
    monkeypatch.setattr(inputs_module, "as_table", lambda obj, **kw: read.append(kw.get("name")) or
                        real_table(obj, **kw))
    upd = update(tmp_path / "r", network_b=new_b)
    assert read == [str(new_b)]  # B only: A and the prior came from the state
    monkeypatch.undo()
    ref = aligner.align(tmp_path / "a_loops.tsv", new_b, p_dup, directed=directed, top_k=top_k or 25)
    assert ref.network_a.n_self_loops == 3 and ref.network_a.n_duplicate_edges >= 7
    assert ref.summary["inputs"]["prior"]["duplicate_pairs_merged"] == 5
    if top_k is not None:
        assert ref.candidates.m < ref.summary["inputs"]["prior"]["pairs"]  # the cut drops pairs
    _same_network(upd.network_a, ref.network_a)
    assert np.array_equal(upd.candidates.pairs, ref.candidates.pairs)
    assert np.array_equal(upd.candidates.prior, ref.candidates.prior)
    drop = {"source"}
    for key in ("network_a", "network_b", "prior"):
        got, want = upd.summary["inputs"][key], ref.summary["inputs"][key]
        assert {k: v for k, v in got.items() if k not in drop} == {k: v for k, v in want.items() if k not in drop}
    _agree(upd, ref)


def test_prior_diffs_give_what_the_edited_prior_gives(base, tmp_path):
    # Reference: aligner.align on the prior file edited by hand the same way (rows rescored,
    # rows added, pairs removed).
    d, a, b, prior = base
    rng = np.random.default_rng(7)
    cols = list(prior.columns)
    nodes_a = prior.iloc[:, 0].unique()
    rescore = prior.iloc[rng.choice(len(prior), 20, replace=False)].copy()
    rescore[cols[2]] = rescore[cols[2]] * 3.0
    added = pd.DataFrame({cols[0]: rng.choice(nodes_a, 10), cols[1]: rng.choice(b.iloc[:, 0].unique(), 10),
                          cols[2]: rng.random(10) + 0.5})
    gone = prior.drop(rescore.index).iloc[rng.choice(len(prior) - 20, 15, replace=False), :2]
    edited = prior.drop(rescore.index)
    edited = edited[~edited.set_index(cols[:2]).index.isin(gone.set_index(cols[:2]).index)]
    edited = pd.concat([edited, rescore, added], ignore_index=True)
    edited = edited.drop_duplicates(cols[:2], keep="last")  # an added pair the prior had: the new score
    add_rows = pd.concat([rescore, added], ignore_index=True)
    upd = update(d / "run", add_prior=_write(tmp_path, "add.tsv", add_rows),
                 remove_prior=_write(tmp_path, "gone.tsv", gone))
    ref = aligner.align(d / "a.tsv", d / "b.tsv", _write(tmp_path, "edited.tsv", edited))
    _agree(upd, ref)
    # the prior's record (rows read, unknown names, merged repeats) is the edited file's
    got, want = upd.summary["inputs"]["prior"], ref.summary["inputs"]["prior"]
    assert {k: v for k, v in got.items() if k != "source"} == {k: v for k, v in want.items() if k != "source"}
    c = upd.summary["update"]["changes"]
    assert c["candidates_rescored"] >= 15 and c["candidates_removed"] >= 10
    # rows rescored lower, given as a DataFrame with names padded by blanks (trimmed as a file's
    # fields are, so each still replaces its row), give what the same rows in a file give
    lower = prior.iloc[rng.choice(len(prior), 20, replace=False)].copy()
    lower[cols[2]] = lower[cols[2]] * 0.01
    from_file = update(d / "run", add_prior=_write(tmp_path, "lower.tsv", lower))
    padded = lower.copy()
    padded[cols[0]] = " " + padded[cols[0]].astype(str) + "\t"
    from_frame = update(d / "run", add_prior=padded)
    assert np.array_equal(from_frame.candidates.pairs, from_file.candidates.pairs)
    assert np.array_equal(from_frame.candidates.prior, from_file.candidates.prior)
    assert from_file.summary["update"]["changes"]["candidates_rescored"] > 0
    # a pair to remove that the prior lacks is refused, naming it; nothing is written
    bad = _write(tmp_path, "bad.tsv", pd.DataFrame({"node_a": ["nowhere"], "node_b": ["b0"]}))
    got = runner.invoke(app, ["update", str(d / "run"), "--remove-prior", str(bad), "-o", str(tmp_path / "u")])
    assert got.exit_code == 2 and "nowhere / b0" in got.output and not (tmp_path / "u").exists()
    with pytest.raises(InvalidParameterError, match="not both"):
        update(d / "run", prior=d / "p.tsv", add_prior=tmp_path / "add.tsv")
    # an added row with a score the run's score kind refuses: the message names its file and line
    # (common practice, as for the prior file itself)
    neg = _write(tmp_path, "neg.tsv", pd.DataFrame({"node_a": ["a1", "a2"], "node_b": ["b1", "b2"], "score": [1.0, -3.0]}))
    with pytest.raises(InputFormatError, match=r"neg\.tsv, line 3: the score -3"):
        update(d / "run", add_prior=neg)


@pytest.mark.parametrize("keep_order", [True, False])
def test_scores_are_carried_by_node_whatever_the_new_numbering(keep_order):
    # Reference: a dictionary from each old pair's renumbered nodes to its score (common
    # practice). A renumbering that does not keep the node order (networks given in memory) takes
    # the same path as one that does, the old pairs put in the new order first.
    from aligner.analysis.update import _carried
    from aligner.core.candidates import build_candidates

    rng = np.random.default_rng(5 + keep_order)
    n1, n2 = 30, 25
    flat = rng.choice(n1 * n2, 200, replace=False)
    old = build_candidates(np.stack([flat // n2, flat % n2], axis=1), rng.random(200) + 0.1, n1, n2, top_k=None)
    to_a, to_b = np.arange(n1), np.arange(n2)
    if not keep_order:
        to_a, to_b = rng.permutation(n1), rng.permutation(n2)
    to_a[rng.random(n1) < 0.1] = -1  # some nodes leave
    moved = {(int(to_a[a]), int(to_b[b])): k for k, (a, b) in enumerate(old.pairs) if to_a[a] >= 0 <= to_b[b]}
    keys = np.array(sorted(moved))[rng.random(len(moved)) < 0.8]  # most old pairs stay
    flat_new = np.unique(np.concatenate([keys[:, 0] * n2 + keys[:, 1], rng.choice(n1 * n2, 40)]))
    prior = rng.random(len(flat_new)) + 0.1
    new = build_candidates(np.stack([flat_new // n2, flat_new % n2], axis=1), prior, n1, n2, top_k=None)
    for k, (a, b) in enumerate(new.pairs):  # some stay with their old prior
        if (a, b) in moved and rng.random() < 0.5:
            new.prior[k] = old.prior[moved[int(a), int(b)]]
    old_x = rng.random(old.m).astype(np.float32)
    x0, kept, same = _carried(old.pairs, to_a, to_b, new, old_x, old.prior)
    for k, (a, b) in enumerate(new.pairs):
        i = moved.get((int(a), int(b)))
        assert kept[k] == (i is not None)
        assert x0[k] == (0.0 if i is None else old_x[i])
        assert same[k] == (i is not None and abs(new.prior[k] - old.prior[i]) <= 1e-6 * old.prior[i])
    assert kept.sum() > 100 and same.sum() > 30


# --- one refinement start: the update continues the previous run's local search ---------------
# align refines large problems from one start (Frank–Wolfe from the rounded matching, then the
# local search); an update then continues the local search from the previous final matching over
# the candidates the change reached (docs/method.md, "Updates after the inputs change"). The
# reference stays align on the new inputs from zero, with the same options.

@pytest.fixture(scope="module", params=[("powerlaw", 0.05, "uniform"), ("dupdiv", 0.25, "near")],
                ids=["powerlaw-uniform", "dupdiv-near"])
def one_start(tmp_path_factory, request):
    graph, noise, decoys = request.param
    d = tmp_path_factory.mktemp("update_one_start")
    pair = noisy_relabelled(1500, graph=graph, seed=23, noise=noise, decoys=8, decoy_mode=decoys)
    a, b, prior, _ = as_frames(pair)
    for name, frame in (("a.tsv", a), ("b.tsv", b), ("p.tsv", prior)):
        frame.to_csv(d / name, sep="\t", index=False)
    write_outputs(d / "run", aligner.align(d / "a.tsv", d / "b.tsv", d / "p.tsv", refine_starts=1))
    return d, a, b, prior


def _changed_inputs(d, a, b, prior, change, rng):
    """New input files for one kind of change: (network_a, network_b, prior) paths."""
    files = {"a": d / "a.tsv", "b": d / "b.tsv", "p": d / "p.tsv"}
    if change == "rewire-b":
        b2 = b.copy()
        rows = rng.choice(len(b2), len(b2) // 100, replace=False)
        b2.iloc[rows, 1] = rng.choice(b2.iloc[:, 0].unique(), len(rows))
        files["b"] = _write(d, "b_rw.tsv", b2)
    elif change == "nodes-a":
        new = [f"new{i}" for i in range(15)]
        a2 = pd.concat([a.iloc[10:], pd.DataFrame({"node_a": new, "node_b": list(rng.choice(a.iloc[:, 0].unique(), 15))})],
                       ignore_index=True)
        p2 = pd.concat([prior, pd.DataFrame({"node_a": new, "node_b": list(rng.choice(b.iloc[:, 0].unique(), 15)),
                                             "score": rng.random(15) + 0.5})], ignore_index=True)
        files["a"], files["p"] = _write(d, "a_nodes.tsv", a2), _write(d, "p_nodes.tsv", p2)
    else:  # prior rows of 1 % of the nodes of A rescored
        p2 = prior.copy()
        asked = rng.choice(a.iloc[:, 0].unique(), 15, replace=False)
        rows = np.flatnonzero(p2["node_a"].isin(asked).to_numpy())
        p2.loc[rows, "score"] = p2.loc[rows, "score"] * rng.uniform(0.5, 1.5, len(rows))
        files["p"] = _write(d, "p_rescored.tsv", p2)
    return files["a"], files["b"], files["p"]


@pytest.mark.parametrize("change", ["rewire-b", "nodes-a", "prior"])
def test_one_start_continues_the_search_and_agrees_with_align(one_start, change, monkeypatch):
    import aligner.analysis.update as upd_module
    monkeypatch.setattr(upd_module, "CONTINUE_SHARE", 1.0)  # these small changes touch a few % at 1,500 nodes
    d, a, b, prior = one_start
    new_a, new_b, new_p = _changed_inputs(d, a, b, prior, change, np.random.default_rng(5))
    upd = update(d / "run", network_a=new_a, network_b=new_b, prior=new_p)
    ref = aligner.align(new_a, new_b, new_p, refine_starts=1)
    _agree(upd, ref)
    u = upd.summary["update"]
    assert u["mode"] == "incremental" and u["refine"]["mode"] == "continued"
    assert 0 < u["refine"]["candidates_marked"] < ref.candidates.m  # the search followed the change
    assert upd.evaluation.scores.conserved_edges == ref.evaluation.scores.conserved_edges


def test_a_change_touching_many_candidates_refines_as_align(one_start):
    d, a, b, prior = one_start
    b2 = b.copy()
    rows = np.random.default_rng(6).choice(len(b2), len(b2) // 10, replace=False)  # 10 % rewired
    b2.iloc[rows, 1] = np.random.default_rng(7).choice(b2.iloc[:, 0].unique(), len(rows))
    new_b = _write(d, "b_rw10.tsv", b2)
    upd = update(d / "run", network_b=new_b)
    r = upd.summary["update"]["refine"]
    assert upd.summary["update"]["mode"] == "incremental" and r["mode"] == "full" and "touched" in r["reason"]
    _agree(upd, aligner.align(d / "a.tsv", new_b, d / "p.tsv", refine_starts=1))


def test_one_start_directed_continues_and_agrees_with_align(tmp_path, monkeypatch):
    # the search runs on the symmetrised product graph of a directed run, as align's does
    import aligner.analysis.update as upd_module
    monkeypatch.setattr(upd_module, "CONTINUE_SHARE", 1.0)
    pair = noisy_relabelled(1200, seed=29, noise=0.1, decoys=8)
    a, b, prior, _ = as_frames(pair)
    files = [_write(tmp_path, name, frame) for name, frame in (("a.tsv", a), ("b.tsv", b), ("p.tsv", prior))]
    write_outputs(tmp_path / "run", aligner.align(*files, refine_starts=1, directed=True))
    new_a, new_b, new_p = _changed_inputs(tmp_path, a, b, prior, "rewire-b", np.random.default_rng(8))
    upd = update(tmp_path / "run", network_b=new_b)
    _agree(upd, aligner.align(new_a, new_b, new_p, refine_starts=1, directed=True))
    assert upd.summary["update"]["refine"]["mode"] == "continued"


def test_the_command_says_how_it_refined(one_start, tmp_path, monkeypatch):
    import aligner.analysis.update as upd_module
    monkeypatch.setattr(upd_module, "CONTINUE_SHARE", 1.0)
    d, a, b, prior = one_start
    _, new_b, _ = _changed_inputs(d, a, b, prior, "rewire-b", np.random.default_rng(9))
    got = runner.invoke(app, ["update", str(d / "run"), "--b", str(new_b), "-o", str(tmp_path / "u")])
    assert got.exit_code == 0, got.output
    said = " ".join(got.output.split())
    how = json.loads((tmp_path / "u" / "summary.json").read_text())["update"]["refine"]
    if how["mode"] == "continued":
        assert "refinement: continued from the previous matching over" in said
    else:  # the assignment step from the continued matching raised F (the near-decoy pair)
        assert f"refinement: {how['reason']}" in said, said


@pytest.mark.parametrize("directed", [False, True])
def test_edge_changes_name_the_ends_of_every_changed_edge(directed):
    # Reference: Python sets of edges (an undirected edge as its two ends in order), the old
    # ones renumbered; an old edge that lost a node is removed and its other end changed.
    from aligner.analysis.update import _edge_changes
    rng = np.random.default_rng(11)
    n_old, n_new = 60, 64
    to_new = rng.permutation(n_new)[:n_old]
    to_new[rng.choice(n_old, 4, replace=False)] = -1  # four old nodes leave
    to_new = to_new.astype(np.int64)

    def edges(n, count):
        e = {(int(u), int(v)) for u, v in rng.integers(0, n, (count, 2)) if u != v}
        return {(u, v) if directed else (min(u, v), max(u, v)) for u, v in e}

    old = edges(n_old, 200)
    kept = [(to_new[u], to_new[v]) for u, v in old if to_new[u] >= 0 and to_new[v] >= 0]
    kept = {(int(u), int(v)) if directed else (int(min(u, v)), int(max(u, v))) for u, v in kept}
    new = set(list(kept)[: len(kept) - 20]) | edges(n_new, 30)  # 20 removed, some added
    added, removed = new - kept, kept - new
    cut_ends = {int(to_new[x]) for u, v in old for x in (u, v)
                if (to_new[u] < 0 or to_new[v] < 0) and to_new[x] >= 0}
    want = sorted({x for e in added | removed for x in e} | cut_ends)
    old_arr = np.array(sorted(old), dtype=np.int32)
    new_arr = np.array(sorted(new), dtype=np.int32)
    n_add, n_del, ends = _edge_changes(old_arr, new_arr, to_new, n_new, directed)
    assert n_add == len(added) and n_del == len(old) - len(kept & new)
    assert ends.tolist() == want


def test_edge_diffs_keep_nodes_named_by_self_loops_only(tmp_path):
    # Reference: aligner.align on the edited files. The readers drop a self-loop but keep the
    # node its line names (docs/formats.md); a diff applied to the state's edges must do the
    # same, and report the same counts of loops and repeated edges as the edited file.
    a = pd.DataFrame([("a1", "a2"), ("a2", "a3"), ("a3", "a4"), ("a4", "a1"), ("a1", "a3"), ("zz", "zz")])
    b = pd.DataFrame([("b1", "b2"), ("b2", "b3"), ("b3", "b4"), ("b4", "b1"), ("b1", "b3"), ("yy", "yy")])
    p = pd.DataFrame([("a1", "b1", 1.0), ("a2", "b2", 1.0), ("a3", "b3", 1.0), ("a4", "b4", 1.0), ("zz", "yy", 1.0)])
    for name, frame in (("a.tsv", a), ("b.tsv", b), ("p.tsv", p)):
        frame.to_csv(tmp_path / name, sep="\t", index=False, header=False)
    write_outputs(tmp_path / "run", aligner.align(tmp_path / "a.tsv", tmp_path / "b.tsv", tmp_path / "p.tsv"))
    added = pd.DataFrame([("a2", "a4"), ("a2", "a4"), ("ww", "ww")])  # a repeat, and a new node by a loop
    added.to_csv(tmp_path / "add.tsv", sep="\t", index=False, header=False)
    pd.concat([a, added]).to_csv(tmp_path / "a2.tsv", sep="\t", index=False, header=False)
    upd = update(tmp_path / "run", add_a=tmp_path / "add.tsv")
    ref = aligner.align(tmp_path / "a2.tsv", tmp_path / "b.tsv", tmp_path / "p.tsv")
    assert list(upd.network_a.names) == list(ref.network_a.names) == ["a1", "a2", "a3", "a4", "ww", "zz"]
    assert _pairs(upd) == _pairs(ref) and ("zz", "yy") in _pairs(upd)
    for key in ("self_loops_dropped", "duplicate_edges_merged"):
        assert upd.summary["inputs"]["network_a"][key] == ref.summary["inputs"]["network_a"][key]
    assert upd.summary["update"]["changes"]["nodes_a_removed"] == 0


def test_beta_zero_refines_as_align(tmp_path):
    # Reference: aligner.align on the edited network. With beta 0 the refinement's objective
    # counts conserved edges alone, so a previous match left conserving nothing is a tie that a
    # search continued from the previous matching keeps and align's assignment breaks the other
    # way (found by differential testing; tests/data/update_beta0/README.md): the update refines
    # as align does and says why.
    data = Path(__file__).parents[1] / "data" / "update_beta0"
    opts = {"alpha": 0.5, "refine_starts": 1, "beta": 0.0, "directed": True}
    write_outputs(tmp_path / "run", aligner.align(data / "a.tsv", data / "b.tsv", data / "p.tsv", **opts))
    b = pd.read_csv(data / "b.tsv", sep="\t", header=None)
    gone = pd.read_csv(data / "rem_b.tsv", sep="\t", header=None)
    new = pd.read_csv(data / "add_b.tsv", sep="\t", header=None)
    edited = pd.concat([b[~b.apply(tuple, axis=1).isin(set(gone.apply(tuple, axis=1)))], new])
    edited.to_csv(tmp_path / "b2.tsv", sep="\t", index=False, header=False)
    upd = update(tmp_path / "run", remove_b=data / "rem_b.tsv", add_b=data / "add_b.tsv")
    ref = aligner.align(data / "a.tsv", tmp_path / "b2.tsv", data / "p.tsv", **opts)
    assert upd.summary["update"]["refine"] == {"mode": "full", "reason": "the run refines with beta 0"}
    _agree(upd, ref)


def test_an_assignment_step_from_the_continued_matching_catches_longer_chains(tmp_path):
    # Reference: aligner.align on B with the two edges removed by hand. The search continued from
    # the previous matching stopped one matched pair short of align's (found by differential
    # testing; tests/data/update_chain/README.md); the update now takes one assignment step from
    # its matching, sees F rise and refines as align does.
    data = Path(__file__).parents[1] / "data" / "update_chain"
    opts = {"normalization": "product", "refine_starts": 1}
    write_outputs(tmp_path / "run", aligner.align(data / "a.tsv", data / "b.tsv", data / "p.tsv", **opts))
    b = pd.read_csv(data / "b.tsv", sep="\t", header=None)
    gone = pd.read_csv(data / "rem_b.tsv", sep="\t", header=None)
    b[~b.apply(tuple, axis=1).isin(set(gone.apply(tuple, axis=1)))].to_csv(tmp_path / "b2.tsv", sep="\t",
                                                                           index=False, header=False)
    upd = update(tmp_path / "run", remove_b=data / "rem_b.tsv")
    ref = aligner.align(data / "a.tsv", tmp_path / "b2.tsv", data / "p.tsv", **opts)
    assert upd.summary["update"]["refine"]["mode"] == "full"
    assert "assignment step" in upd.summary["update"]["refine"]["reason"]
    _agree(upd, ref)


def test_an_update_of_a_diffed_update_takes_the_diffed_inputs_from_its_state(base, tmp_path):
    # Reference: aligner.align on the files edited by hand. An update from edge diffs records its
    # network as built from the diff (no file), and one from prior diffs its prior as a table in
    # memory; a second update (through the command line, which can give no such object) must take
    # them from the state, which holds the diffed network exactly and the diffed prior's
    # candidates (found by differential testing of update: a second update was refused with
    # "read network_b from memory; give it to the update").
    d, a, b, prior = base
    rng = np.random.default_rng(5)
    gone = b.iloc[rng.choice(len(b), 6, replace=False)]
    _write(tmp_path, "gone_b.tsv", gone)
    b2 = b.drop(index=gone.index)
    got = runner.invoke(app, ["update", str(d / "run"), "--remove-b", str(tmp_path / "gone_b.tsv"), "-o",
                              str(tmp_path / "u1"), "--quiet"])
    assert got.exit_code == 0, got.output
    got = runner.invoke(app, ["update", str(tmp_path / "u1"), "-o", str(tmp_path / "u2"), "--quiet"])
    assert got.exit_code == 0, got.output  # nothing changed since u1
    gone_a = a.iloc[rng.choice(len(a), 6, replace=False)]
    _write(tmp_path, "gone_a.tsv", gone_a)
    upd = update(tmp_path / "u1", remove_a=tmp_path / "gone_a.tsv")
    ref = aligner.align(_write(tmp_path, "a2.tsv", a.drop(index=gone_a.index)), _write(tmp_path, "b2.tsv", b2),
                        d / "p.tsv")
    _agree(upd, ref)
    # a prior diff, then an update that keeps the nodes: the prior from the state's candidates
    cols = list(prior.columns)
    rescore = prior.iloc[rng.choice(len(prior), 10, replace=False)].copy()
    rescore[cols[2]] = rescore[cols[2]] * 2.0
    got = runner.invoke(app, ["update", str(d / "run"), "--add-prior", str(_write(tmp_path, "resc.tsv", rescore)),
                              "-o", str(tmp_path / "p1"), "--quiet"])
    assert got.exit_code == 0, got.output
    p2 = pd.concat([prior.drop(index=rescore.index), rescore], ignore_index=True)
    upd = update(tmp_path / "p1", remove_b=tmp_path / "gone_b.tsv")
    _agree(upd, aligner.align(d / "a.tsv", tmp_path / "b2.tsv", _write(tmp_path, "p2.tsv", p2)))
    # a second prior diff needs the previous prior whole, which no file holds: the state of the
    # update that edited it keeps its rows (a further diff was refused before it did)
    again = rescore.copy()
    again[cols[2]] = again[cols[2]] * 0.25
    got = runner.invoke(app, ["update", str(tmp_path / "p1"), "--add-prior", str(_write(tmp_path, "again.tsv", again)),
                              "-o", str(tmp_path / "p3"), "--quiet"])
    assert got.exit_code == 0, got.output
    p3 = pd.concat([prior.drop(index=rescore.index), again], ignore_index=True)
    ref = aligner.align(d / "a.tsv", d / "b.tsv", _write(tmp_path, "p3.tsv", p3))
    assert json.loads((tmp_path / "p3" / "summary.json").read_text())["scores"] == json.loads(json_text(ref.summary))["scores"]


def test_a_node_named_by_a_self_loop_line_stays_when_a_diff_removes_its_last_edge(tmp_path):
    # Reference: aligner.align on the edited file. The readers keep a node a dropped self-loop
    # line names (docs/formats.md); a node with edges and a loop line whose last edge a diff
    # removes is still named by the edited file, so it stays, and goes once the loop line is
    # removed too (found by differential testing of update: the diff dropped it, so the update
    # matched one pair fewer than align).
    a = pd.DataFrame([("a1", "a2"), ("a2", "a3"), ("a3", "a4"), ("a4", "a1"), ("a5", "a1"), ("a5", "a5")])
    b = pd.DataFrame([("b1", "b2"), ("b2", "b3"), ("b3", "b4"), ("b4", "b1"), ("b5", "b1")])
    p = pd.DataFrame([("a1", "b1", 1.0), ("a2", "b2", 1.0), ("a3", "b3", 1.0), ("a4", "b4", 1.0), ("a5", "b5", 1.0),
                      ("a1", "b3", 0.5)])
    for name, frame in (("a.tsv", a), ("b.tsv", b), ("p.tsv", p)):
        frame.to_csv(tmp_path / name, sep="\t", index=False, header=False)
    write_outputs(tmp_path / "run", aligner.align(tmp_path / "a.tsv", tmp_path / "b.tsv", tmp_path / "p.tsv"))
    a.iloc[[4]].to_csv(tmp_path / "gone.tsv", sep="\t", index=False, header=False)
    a.drop(index=4).to_csv(tmp_path / "a2.tsv", sep="\t", index=False, header=False)
    upd = update(tmp_path / "run", remove_a=tmp_path / "gone.tsv")
    ref = aligner.align(tmp_path / "a2.tsv", tmp_path / "b.tsv", tmp_path / "p.tsv")
    assert list(upd.network_a.names) == list(ref.network_a.names) == ["a1", "a2", "a3", "a4", "a5"]
    _agree(upd, ref)
    assert ("a5", "b5") in _pairs(upd)
    # the loop line removed in a second update (from the first's state): the node goes
    write_outputs(tmp_path / "u1", upd)
    a.iloc[[5]].to_csv(tmp_path / "loop.tsv", sep="\t", index=False, header=False)
    a.drop(index=[4, 5]).to_csv(tmp_path / "a3.tsv", sep="\t", index=False, header=False)
    upd = update(tmp_path / "u1", remove_a=tmp_path / "loop.tsv")
    ref = aligner.align(tmp_path / "a3.tsv", tmp_path / "b.tsv", tmp_path / "p.tsv")
    assert list(upd.network_a.names) == list(ref.network_a.names) == ["a1", "a2", "a3", "a4"]
    _agree(upd, ref)


def test_a_diff_removing_a_self_loop_line_the_run_lacks_is_refused(tmp_path):
    # Common practice for diffs (docs/formats.md: each edge to remove must be there). The readers
    # drop self-loops, so the check on the state's edges never saw them: removing a loop the file
    # never had was accepted and lowered the count of self-loops (found by differential testing
    # of update). Reference for the counts: aligner.align on the edited file.
    a = pd.DataFrame([("a1", "a2"), ("a2", "a3"), ("a3", "a4"), ("a4", "a1"), ("a1", "a3")])
    b = pd.DataFrame([("b1", "b2"), ("b2", "b3"), ("b3", "b4"), ("b4", "b1"), ("b1", "b3"), ("b2", "b2"),
                      ("b3", "b3")])
    p = pd.DataFrame([(f"a{i}", f"b{i}", 0.9) for i in range(1, 5)])
    for name, frame in (("a.tsv", a), ("b.tsv", b), ("p.tsv", p)):
        frame.to_csv(tmp_path / name, sep="\t", index=False, header=False)
    write_outputs(tmp_path / "run", aligner.align(tmp_path / "a.tsv", tmp_path / "b.tsv", tmp_path / "p.tsv"))
    for loop in ("b4", "zz"):  # a node of B without a loop line, and no node of B
        (tmp_path / "rm.tsv").write_text(f"{loop}\t{loop}\n")
        got = runner.invoke(app, ["update", str(tmp_path / "run"), "--remove-b", str(tmp_path / "rm.tsv"), "-o",
                                  str(tmp_path / "out")])
        assert got.exit_code == 2, got.output
        assert f"remove a self-loop line it does not have: {loop} - {loop}" in " ".join(got.output.split())
        assert not (tmp_path / "out").exists()
    # a loop the file has, named twice in the diff: one line goes, as from the edited file
    (tmp_path / "rm.tsv").write_text("b2\tb2\nb2\tb2\n")
    upd = update(tmp_path / "run", remove_b=tmp_path / "rm.tsv")
    b.drop(index=5).to_csv(tmp_path / "b2.tsv", sep="\t", index=False, header=False)
    ref = aligner.align(tmp_path / "a.tsv", tmp_path / "b2.tsv", tmp_path / "p.tsv")
    assert upd.summary["inputs"]["network_b"]["self_loops_dropped"] == \
        ref.summary["inputs"]["network_b"]["self_loops_dropped"] == 1
    _agree(upd, ref)


def test_a_diff_without_the_header_line_of_a_header_yes_run_is_refused(tmp_path):
    # Common practice: a run read with --header yes reads its diffs so too; a diff written
    # without a header line would lose its first row without a word (found by differential
    # testing of update: an added edge vanished). A first line naming a node of the run is
    # refused; a diff with its own header line applies. Reference: aligner.align on the edited file.
    a = pd.DataFrame([("a1", "a2"), ("a2", "a3"), ("a3", "a4"), ("a4", "a1")], columns=["source", "target"])
    b = pd.DataFrame([("b1", "b2"), ("b2", "b3"), ("b3", "b4"), ("b4", "b1")], columns=["source", "target"])
    p = pd.DataFrame([(f"a{i}", f"b{i}", 0.9) for i in range(1, 5)], columns=["node_a", "node_b", "score"])
    for name, frame in (("a.tsv", a), ("b.tsv", b), ("p.tsv", p)):
        frame.to_csv(tmp_path / name, sep="\t", index=False)
    write_outputs(tmp_path / "run", aligner.align(tmp_path / "a.tsv", tmp_path / "b.tsv", tmp_path / "p.tsv",
                                                  header="yes"))
    (tmp_path / "add.tsv").write_text("a1\ta3\n")  # a header line only, as --header yes reads it
    (tmp_path / "new.tsv").write_text("a9\ta1\na2\ta4\n")  # a new node first: its second field names a node
    (tmp_path / "two.tsv").write_text("a1\ta3\nb1\tb3\t0.5\n")
    for option, path in (("--add-a", "add.tsv"), ("--add-a", "new.tsv"), ("--add-prior", "two.tsv")):
        got = runner.invoke(app, ["update", str(tmp_path / "run"), option, str(tmp_path / path), "-o",
                                  str(tmp_path / "out")])
        assert got.exit_code == 2, got.output
        assert "taken for a header line" in got.output and "'a1', a node of network A" in " ".join(got.output.split())
        assert not (tmp_path / "out").exists()
        assert not (tmp_path / "out").exists()
    (tmp_path / "add.tsv").write_text("source\ttarget\na1\ta3\n")
    upd = update(tmp_path / "run", add_a=tmp_path / "add.tsv")
    edited = pd.concat([a, pd.DataFrame([("a1", "a3")], columns=a.columns)])
    edited.to_csv(tmp_path / "a2.tsv", sep="\t", index=False)
    ref = aligner.align(tmp_path / "a2.tsv", tmp_path / "b.tsv", tmp_path / "p.tsv", header="yes")
    assert upd.network_a.n_edges == ref.network_a.n_edges == 5
    _agree(upd, ref)


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="named pipes are POSIX")
def test_a_pipe_is_refused_not_read_as_empty(base, tmp_path):
    # Found by testing the commands together: a diff given as a shell's <(...) was read once to
    # look for gzip's magic bytes, then found empty, so the update applied nothing and said so
    # (exit 0); align named the pipe "empty". Every input is read more than once, so a pipe is
    # refused (common practice: exit 2, the path named, nothing written), before anything opens
    # it. Each command runs in its own process with a time limit: code that opened the pipe would
    # wait for a writer for ever.
    d, *_ = base
    fifo = tmp_path / "pipe.tsv"
    os.mkfifo(fifo)
    cli = "import sys; from aligner.cli.app import app; sys.argv[0] = 'aligner'; app()"
    for args in (["update", str(d / "run"), "--add-b", str(fifo)],
                 ["align", str(fifo), str(d / "b.tsv"), "-p", str(d / "p.tsv")]):
        got = subprocess.run([sys.executable, "-c", cli, *args, "-o", str(tmp_path / "out")], capture_output=True,
                             text=True, timeout=120)
        assert got.returncode == 2, got.stderr
        assert "is a pipe or a device, not a file" in " ".join(got.stderr.split())
        assert not (tmp_path / "out").exists()


def test_an_update_of_a_run_with_parquet_copies_writes_them_too(base, tmp_path):
    # Found by testing the commands together: an update of an `align --parquet` run wrote no
    # Parquet copies (update keeps the run's options; it has no --parquet of its own). Reference:
    # the update's own TSV tables, read by pandas, against its Parquet copies read by pandas.
    d, *_ = base
    got = runner.invoke(app, ["align", str(d / "a.tsv"), str(d / "b.tsv"), "-p", str(d / "p.tsv"), "--parquet",
                              "-o", str(tmp_path / "run"), "-q"])
    assert got.exit_code == 0, got.output
    for previous, out in (("run", "u1"), ("u1", "u2")):  # and an update of the update
        got = runner.invoke(app, ["update", str(tmp_path / previous), "-o", str(tmp_path / out), "-q"])
        assert got.exit_code == 0, got.output
        tsv = pd.read_csv(tmp_path / out / "alignment.tsv", sep="\t", dtype={"node_a": str, "node_b": str})
        pq = pd.read_parquet(tmp_path / out / "alignment.parquet")
        assert pq[["node_a", "node_b"]].astype(str).values.tolist() == tsv[["node_a", "node_b"]].values.tolist()
    got = runner.invoke(app, ["update", str(d / "run"), "-o", str(tmp_path / "u3"), "-q"])  # a run without them
    assert got.exit_code == 0, got.output
    assert not (tmp_path / "u3" / "alignment.parquet").exists()


def test_an_align_option_given_to_update_says_the_options_are_kept(tmp_path):
    # An option of align given to update is not a typo for one of update's (the framework
    # suggested "--a" for --alpha): the message says an update keeps the run's options. A real
    # typo keeps the framework's suggestion. Common practice: one error line, exit status 2.
    got = runner.invoke(app, ["update", str(tmp_path), "--alpha", "0.5", "-o", str(tmp_path / "u")])
    assert got.exit_code == 2
    said = " ".join(got.output.split())
    assert "--alpha is an option of align; an update keeps the previous run's options" in said
    assert "Possible options" not in said and not (tmp_path / "u").exists()
    got = runner.invoke(app, ["update", str(tmp_path), "--alpah", "0.5", "-o", str(tmp_path / "u")])
    assert got.exit_code == 2 and "no such option: --alpah" in " ".join(got.output.split())


def test_an_empty_diff_changes_nothing(base, tmp_path):
    # A feed of changes has quiet days: a diff file without data rows (0 bytes, or a header only)
    # adds or removes nothing, instead of stopping the update. Reference: aligner.align on the
    # same inputs (an empty removal beside a real addition gives the addition's result).
    d, a, b, prior = base
    empty = tmp_path / "empty.tsv"
    empty.write_text("")
    header = tmp_path / "header.tsv"
    header.write_text("node_a\tnode_b\n")
    same = update(d / "run", remove_b=empty, add_b=header)
    _agree(same, aligner.align(d / "a.tsv", d / "b.tsv", d / "p.tsv"))
    assert sum(same.summary["update"]["changes"][k] for k in ("edges_b_added", "edges_b_removed")) == 0
    got = runner.invoke(app, ["update", str(d / "run"), "--add-prior", str(empty), "--remove-prior", str(header),
                              "-o", str(tmp_path / "u"), "-q"])
    assert got.exit_code == 0, got.output
    nodes = sorted(set(b.iloc[:, 0]) | set(b.iloc[:, 1]))
    added = _write(tmp_path, "added.tsv", pd.DataFrame({"node_a": [nodes[0]], "node_b": [nodes[-1]]}))
    one = update(d / "run", add_b=added, remove_b=empty)
    b2 = pd.concat([b, pd.DataFrame({b.columns[0]: [nodes[0]], b.columns[1]: [nodes[-1]]})], ignore_index=True)
    _agree(one, aligner.align(d / "a.tsv", _write(tmp_path, "b2.tsv", b2), d / "p.tsv"))


def test_renumber_maps_old_nodes_by_name():
    # reference: a Python dict from each new name to its position; gone nodes map to -1, and the
    # new names need not be sorted (the look-up is by hash)
    from aligner.analysis.update import _renumber

    rng = np.random.default_rng(3)
    old = np.array(sorted(f"n{i:04d}" for i in range(300)), dtype=str)
    kept = [v for v in old.tolist() if rng.random() > 0.2]
    new = np.array(kept + [f"added{i}" for i in range(40)], dtype=object)
    rng.shuffle(new)
    where = {v: i for i, v in enumerate(new.tolist())}
    expected = [where.get(v, -1) for v in old.tolist()]
    assert _renumber(old, new).tolist() == expected
    assert _renumber(old, old.astype(object)).tolist() == list(range(len(old)))


def test_prior_diffs_chain_and_edit_the_rows_in_place(tmp_path):
    # Reference: aligner.align on the prior file edited by hand after each step (pandas), with
    # repeated pairs and rows naming nodes the networks lack, as a daily feed of prior rows
    # would give them. Every row of a rescored pair takes the new score in its place, so the
    # record of the table (rows, repeats merged, the first rows naming unknown nodes) is the
    # edited file's. The second and third diffs find the previous prior in the state of the
    # update before (no file holds it; such a diff was refused before), and an update giving a
    # network with new nodes rebuilds the prior from those rows by name. Found by differential
    # testing of chains of updates (149 steps: a rescored pair with repeats became one row at
    # the end, so the counts and the unknown examples differed from the edited file's).
    pair = noisy_relabelled(300, seed=4, noise=0.05, decoys=4)
    a, b, prior, _ = as_frames(pair)
    cols = list(prior.columns)
    nodes_b = b.iloc[:, 0].astype(str).unique()
    ghosts = pd.DataFrame({cols[0]: ["ghost1", "ghost2", "late"], cols[1]: nodes_b[:3], cols[2]: [1.0, 2.0, 3.0]})
    prior = pd.concat([ghosts.iloc[:1], prior, prior.iloc[:5].assign(**{cols[2]: 0.5}), ghosts.iloc[1:]],
                      ignore_index=True).astype({cols[0]: str, cols[1]: str})
    fa, fb = _write(tmp_path, "a.tsv", a), _write(tmp_path, "b.tsv", b)
    write_outputs(tmp_path / "r0", aligner.align(fa, fb, _write(tmp_path, "p0.tsv", prior)))

    def edit(table, rows, gone=None):
        """The file edited by hand: removed pairs out, rescored pairs' rows changed in place, new rows last."""
        key = list(zip(table[cols[0]], table[cols[1]]))
        score = dict(zip(zip(rows[cols[0]], rows[cols[1]]), rows[cols[2]]))
        out = table.assign(**{cols[2]: [score.get(k, v) for k, v in zip(key, table[cols[2]])]})
        out = out[[k not in set(gone or ()) for k in key]]
        new = rows[[k not in set(key) for k in zip(rows[cols[0]], rows[cols[1]])]]
        return pd.concat([out, new], ignore_index=True)

    def check(run, ref):
        _agree(run, ref)
        got, want = run.summary["inputs"]["prior"], ref.summary["inputs"]["prior"]
        assert {k: v for k, v in got.items() if k != "source"} == {k: v for k, v in want.items() if k != "source"}

    # 1. rescore a repeated pair, the first row naming an unknown node, and add a pair
    rows = pd.DataFrame({cols[0]: [prior[cols[0]][1], "ghost1", prior[cols[0]][9]],
                         cols[1]: [prior[cols[1]][1], nodes_b[0], nodes_b[7]], cols[2]: [9.0, 4.0, 0.75]})
    p1 = edit(prior, rows)
    assert p1.duplicated(cols[:2]).sum() == 5 and len(p1) in (len(prior), len(prior) + 1)
    write_outputs(tmp_path / "r1", upd := update(tmp_path / "r0", add_prior=_write(tmp_path, "d1.tsv", rows)))
    check(upd, ref := aligner.align(fa, fb, _write(tmp_path, "p1.tsv", p1)))
    assert ref.summary["inputs"]["prior"]["unknown_examples"][0].startswith("ghost1")
    (tmp_path / "p0.tsv").unlink()  # from now on no file holds the previous prior
    # 2. a further diff: rescore and remove, from the rows the state of r1 keeps
    rows2 = pd.DataFrame({cols[0]: [prior[cols[0]][2]], cols[1]: [prior[cols[1]][2]], cols[2]: [0.01]})
    gone2 = [(prior[cols[0]][3], prior[cols[1]][3])]
    p2 = edit(p1, rows2, gone2)
    write_outputs(tmp_path / "r2", upd := update(tmp_path / "r1", add_prior=_write(tmp_path, "d2.tsv", rows2),
                                                remove_prior=_write(tmp_path, "g2.tsv", pd.DataFrame(gone2, columns=cols[:2]))))
    check(upd, aligner.align(fa, fb, _write(tmp_path, "p2.tsv", p2)))
    assert upd.summary["inputs"]["prior"]["unknown_node_rows"] == 3  # ghost1, ghost2, late
    # 3. network A gains the node "late", which a prior row named: that row now counts
    a3 = pd.concat([a, pd.DataFrame({a.columns[0]: ["late"], a.columns[1]: [a.iloc[0, 0]]})], ignore_index=True)
    fa3 = _write(tmp_path, "a3.tsv", a3)
    write_outputs(tmp_path / "r3", upd := update(tmp_path / "r2", network_a=fa3))
    check(upd, ref := aligner.align(fa3, fb, _write(tmp_path, "p3.tsv", p2)))
    assert ref.summary["inputs"]["prior"]["unknown_node_rows"] == upd.summary["inputs"]["prior"]["unknown_node_rows"] == 2
    # 4. and a diff after that, naming a pair twice (the last row counts) and a node of B that
    # neither network has
    pair = (prior[cols[0]][6], prior[cols[1]][6])
    rows4 = pd.DataFrame({cols[0]: ["late", pair[0], pair[0], "late"], cols[1]: [nodes_b[2], pair[1], pair[1], "nobody"],
                          cols[2]: [0.2, 7.0, 0.3, 1.0]})
    upd = update(tmp_path / "r3", add_prior=_write(tmp_path, "d4.tsv", rows4))
    check(upd, ref := aligner.align(fa3, fb, _write(tmp_path, "p4.tsv", edit(p2, rows4))))
    assert dict(zip(map(tuple, ref.candidates.pairs.tolist()), ref.candidates.prior))[
        (int(np.searchsorted(ref.network_a.names.astype(str), pair[0])),
         int(np.searchsorted(ref.network_b.names.astype(str), pair[1])))] == 0.3


def test_a_state_of_the_previous_format_version_is_read(base, tmp_path, monkeypatch):
    # Common practice: a format version that only adds optional arrays keeps reading the files of
    # the version before (version 3: no prior rows).
    import aligner.io.state as state_module

    d, a, b, prior = base
    monkeypatch.setattr(state_module, "STATE_VERSION", 3)
    write_outputs(tmp_path / "v3", aligner.align(d / "a.tsv", d / "b.tsv", d / "p.tsv"))
    monkeypatch.undo()
    assert state_module.read_state(tmp_path / "v3").meta["version"] == 3
    _agree(update(tmp_path / "v3"), aligner.align(d / "a.tsv", d / "b.tsv", d / "p.tsv"))


def test_a_prior_given_as_a_dataframe_takes_diffs(base, tmp_path):
    # Reference: aligner.align on the DataFrame edited by hand (pandas). A prior given in memory
    # has no file to read again: the run's state keeps its rows, so an update can apply a diff
    # to it (refused before: "prior diffs apply to a previous prior read from a file").
    d, a, b, prior = base
    cols = list(prior.columns)
    write_outputs(tmp_path / "r", aligner.align(d / "a.tsv", d / "b.tsv", prior))
    rows = prior.iloc[[3, 8, 40]].assign(**{cols[2]: [0.01, 5.0, 2.5]})
    upd = update(tmp_path / "r", add_prior=rows)
    edited = prior.copy()
    edited.loc[rows.index, cols[2]] = rows[cols[2]]
    _agree(upd, aligner.align(d / "a.tsv", d / "b.tsv", edited))
    assert upd.summary["inputs"]["prior"]["source"] == "<prior: <DataFrame prior> with the diff applied>"
    assert upd.summary["update"]["changes"]["candidates_rescored"] == 3


def test_a_diff_that_does_not_fit_names_its_line(base, tmp_path):
    # Common practice (docs/errors.md): a refused row is named by its file and line. An edge to add
    # that B has, an edge to remove that A lacks and a prior pair to remove that the prior lacks
    # were named by file only (noticed by fuzzing the input layer); a two-column file of prior rows
    # to add said "expected 3 for a prior rows to add".
    d, a, b, prior = base
    have = b.iloc[7]
    (tmp_path / "add_b.tsv").write_text(f"u\tv\nfresh1\tfresh2\n{have.iloc[1]}\t{have.iloc[0]}\n")
    got = runner.invoke(app, ["update", str(d / "run"), "--add-b", str(tmp_path / "add_b.tsv"), "-o", str(tmp_path / "u")])
    assert got.exit_code == 2 and "add_b.tsv, line 3" in " ".join(got.output.split()) and not (tmp_path / "u").exists()
    (tmp_path / "rm_a.tsv").write_text(f"{a.iloc[0, 0]}\t{a.iloc[0, 1]}\nnobody1\tnobody2\n")
    with pytest.raises(InputFormatError, match=r"rm_a\.tsv, line 2: the diff asks network A .* nobody1 - nobody2"):
        update(d / "run", remove_a=tmp_path / "rm_a.tsv")
    (tmp_path / "rm_p.tsv").write_text(f"node_a\tnode_b\n{prior.iloc[0, 0]}\t{prior.iloc[0, 1]}\nnowhere\tb0\n")
    with pytest.raises(InputFormatError, match=r"rm_p\.tsv, line 3: .*nowhere / b0"):
        update(d / "run", remove_prior=tmp_path / "rm_p.tsv")
    (tmp_path / "add_p.tsv").write_text("x\ty\n")
    with pytest.raises(InputFormatError, match="expected 3 for a table of prior rows to add"):
        update(d / "run", add_prior=tmp_path / "add_p.tsv")


# --------------------------------------------------------------------------- several starts
# A small run refines from several starts and keeps the best (docs/method.md, "Several
# starts"); the other matchings they reach that conserve nearly as many edges name alternatives
# (docs/method.md, "Interchangeable nodes", (iii)). An update continues the search from the
# previous run's matching, the best of its starts, when they reached no such matching, and
# refines as align otherwise: a search from one matching would not find the others again.
# Reference: align on the new inputs with the same (default) options.

def _inputs_in(d, a, b, prior):
    for name, frame in (("a.tsv", a), ("b.tsv", b), ("p.tsv", prior)):
        _write(d, name, frame)
    return d


def _written_with(first, out, monkeypatch, meta=None, without=None):
    """write_outputs of ``first`` with entries of its state's meta replaced (a value of None
    removes the entry, as in a state written before it was kept) and the array ``without`` left out."""
    arrays, record = first.state()
    for key, value in (meta or {}).items():
        if value is None:
            del record[key]
        else:
            record[key] = value
    arrays = {k: v for k, v in arrays.items() if k != without}
    with monkeypatch.context() as m:
        m.setattr(type(first), "state", lambda self: (arrays, record))
        write_outputs(out, first)


def _alternatives(res) -> dict:
    return dict(zip(zip(res.pairs.node_a, res.pairs.node_b), res.pairs.alternatives))


@pytest.mark.parametrize("change", ["rewire-b", "prior"])
def test_several_starts_continue_from_the_best_when_none_came_near(one_start, change, tmp_path, monkeypatch):
    import aligner.analysis.update as upd_module
    monkeypatch.setattr(upd_module, "CONTINUE_SHARE", 1.0)  # these small changes touch a few % at 1,500 nodes
    _, a, b, prior = one_start
    d = _inputs_in(tmp_path, a, b, prior)
    first = aligner.align(d / "a.tsv", d / "b.tsv", d / "p.tsv")
    assert len(first.summary["refine"]["starts"]) > 1  # the size rule: several starts at 1,500 nodes
    write_outputs(d / "run", first)
    new_a, new_b, new_p = _changed_inputs(d, a, b, prior, change, np.random.default_rng(12))
    upd = update(d / "run", network_a=new_a, network_b=new_b, prior=new_p)
    ref = aligner.align(new_a, new_b, new_p)
    _agree(upd, ref)
    assert upd.evaluation.scores.conserved_edges == ref.evaluation.scores.conserved_edges
    assert _alternatives(upd) == _alternatives(ref)
    assert first.summary["ambiguity"]["near_optima"] == 0  # (this pair's starts reach no other near matching)
    assert upd.summary["update"]["refine"]["mode"] == "continued"


def test_several_starts_that_came_near_refine_as_align_and_name_the_same_alternatives(tmp_path):
    # a noisy pair with near decoys whose starts end at two matchings of nearly as many edges
    pair = noisy_relabelled(1000, graph="dupdiv", seed=2060, noise=0.25, decoys=10, decoy_mode="near")
    a, b, prior, _ = as_frames(pair)
    d = _inputs_in(tmp_path, a, b, prior)
    first = aligner.align(d / "a.tsv", d / "b.tsv", d / "p.tsv")
    near = first.summary["ambiguity"]["near_optima"]
    assert near >= 1
    write_outputs(d / "run", first)
    _, new_b, _ = _changed_inputs(d, a, b, prior, "rewire-b", np.random.default_rng(14))
    upd = update(d / "run", network_b=new_b)
    ref = aligner.align(d / "a.tsv", new_b, d / "p.tsv")
    _agree(upd, ref)
    assert _alternatives(upd) == _alternatives(ref)
    assert upd.summary["ambiguity"]["near_optima"] == ref.summary["ambiguity"]["near_optima"]
    assert upd.summary["update"]["refine"] == {
        "mode": "full", "reason": "the run refines from several starts, and the previous run's reached "
                                  f"{near} near-optimal matching{'' if near == 1 else 's'}"}


@pytest.mark.parametrize("near", [0, 2, None])
def test_several_starts_refine_as_align_when_the_previous_run_came_near(one_start, near, tmp_path, monkeypatch):
    # the state's record of the previous run's near-optimal matchings decides (None: a state
    # written before it was kept); here it is set by hand on the same run
    import aligner.analysis.update as upd_module
    monkeypatch.setattr(upd_module, "CONTINUE_SHARE", 1.0)
    _, a, b, prior = one_start
    d = _inputs_in(tmp_path, a, b, prior)
    first = aligner.align(d / "a.tsv", d / "b.tsv", d / "p.tsv")
    assert first.state()[1]["near_optima"] == first.summary["ambiguity"]["near_optima"]
    _written_with(first, d / "run", monkeypatch, {"near_optima": near})
    _, new_b, _ = _changed_inputs(d, a, b, prior, "rewire-b", np.random.default_rng(13))
    upd = update(d / "run", network_b=new_b)
    _agree(upd, aligner.align(d / "a.tsv", new_b, d / "p.tsv"))
    how = upd.summary["update"]["refine"]
    if near == 0:
        assert how["mode"] == "continued"
    elif near is None:
        assert how["mode"] == "full" and "does not say whether" in how["reason"]
    else:
        assert how["mode"] == "full" and "reached 2 near-optimal matchings" in how["reason"]
        assert len(upd.summary["refine"]["starts"]) > 1  # align's refinement, from its starts


def test_several_starts_let_the_search_continue_over_more_of_the_candidates(tmp_path):
    # align refines once per start, so the share of candidates a change may touch before the
    # update refines as align grows with the starts: 5 % per start (CONTINUE_SHARE); the same
    # change on a one-start run of the same pair refines as align
    from aligner.analysis.update import CONTINUE_SHARE
    a, b, prior, _ = as_frames(noisy_relabelled(1500, seed=23, noise=0.05, decoys=8))
    d = _inputs_in(tmp_path, a, b, prior)
    rng = np.random.default_rng(15)
    b2 = b.copy()
    rows = rng.choice(len(b2), 3 * len(b2) // 100, replace=False)  # 3 % of B's edges rewired
    b2.iloc[rows, 1] = rng.choice(b2.iloc[:, 0].unique(), len(rows))
    new_b = _write(d, "b_rw3.tsv", b2)
    for starts in (None, 1):
        run = d / f"run{starts}"
        write_outputs(run, aligner.align(d / "a.tsv", d / "b.tsv", d / "p.tsv", refine_starts=starts))
        upd = update(run, network_b=new_b)
        ref = aligner.align(d / "a.tsv", new_b, d / "p.tsv", refine_starts=starts)
        _agree(upd, ref)
        how = upd.summary["update"]["refine"]
        assert how["pairs_touched"] > CONTINUE_SHARE * ref.candidates.m  # more than one start's share
        if starts is None:
            assert len(ref.summary["refine"]["starts"]) == 8 and how["mode"] == "continued"
        else:
            assert how["mode"] == "full" and "(more than 5%): refined as align" in how["reason"]


# --------------------------------------------------------------------------- seed pairs
# align keeps no refined matching that drops a seed pair (its rounded matching then stands);
# an update continues the search from the previous matching when it was the refinement's, and
# refines as align when the continued search drops a seed pair (new seeds, say). Reference:
# align on the new inputs with the same seeds.

@pytest.fixture(scope="module")
def seeded(tmp_path_factory):
    d = tmp_path_factory.mktemp("update_seeded")
    a, b, prior, truth = as_frames(noisy_relabelled(1500, seed=31, noise=0.1, decoys=8))
    _inputs_in(d, a, b, prior)
    _write(d, "s.tsv", truth.iloc[::20])  # 75 seed pairs
    _write(d, "s2.tsv", truth.iloc[5::20])  # 75 others
    return d, a, b, prior


@pytest.mark.parametrize("starts", [1, None])
def test_seed_pairs_continue_the_search_and_agree_with_align(seeded, starts, tmp_path):
    d, a, b, prior = seeded
    run = tmp_path / "run"
    first = aligner.align(d / "a.tsv", d / "b.tsv", d / "p.tsv", seeds=d / "s.tsv", refine_starts=starts)
    assert first.improvement.refined is not None and first.state()[1]["refined"] is True
    write_outputs(run, first)
    rng = np.random.default_rng(16)
    b2 = b.copy()
    rows = rng.choice(len(b2), len(b2) // 1000 + 1, replace=False)
    b2.iloc[rows, 1] = rng.choice(b2.iloc[:, 0].unique(), len(rows))
    new_b = _write(tmp_path, "b2.tsv", b2)
    upd = update(run, network_b=new_b)
    ref = aligner.align(d / "a.tsv", new_b, d / "p.tsv", seeds=d / "s.tsv", refine_starts=starts)
    _agree(upd, ref)
    assert upd.summary["update"]["refine"]["mode"] == "continued"
    assert np.isin(upd.problem.seed_index, upd.matching.index).all()


def _rotated_seeds(first, path):
    """Seeds that rotate the partners of three matched nodes: pairs the previous matching lacks."""
    matched = sorted(_pairs(first))[100:103]
    rotated = [(matched[k][0], matched[(k + 1) % 3][1]) for k in range(3)]
    return _write(path.parent, path.name, pd.DataFrame(rotated, columns=["node_a", "node_b"]))


@pytest.mark.parametrize("drop", [False, True])
def test_new_seed_pairs_keep_the_update_with_align(seeded, drop, tmp_path, monkeypatch):
    # drop: the continued search is made to end without one seed pair (a stand-in for a search
    # that does not reach them), and the update then refines as align
    import aligner.analysis.update as upd_module
    import aligner.core.refine as refine_module
    monkeypatch.setattr(upd_module, "CONTINUE_SHARE", 1.0)  # new seeds move the scores of a tenth of the pairs
    d, a, b, prior = seeded
    first = aligner.align(d / "a.tsv", d / "b.tsv", d / "p.tsv", seeds=d / "s.tsv", refine_starts=1)
    write_outputs(tmp_path / "run", first)
    new_seeds = _rotated_seeds(first, tmp_path / "s3.tsv")
    if drop:
        real = refine_module.continue_local_search
        node = int(np.searchsorted(first.network_a.names, pd.read_csv(new_seeds, sep="\t", dtype=str).iloc[0, 0]))

        def without_a_seed(prod, cand, w, index, *args, **kwargs):
            res, marked = real(prod, cand, w, index, *args, **kwargs)
            return dataclasses.replace(res, index=res.index[cand.pairs[res.index, 0] != node]), marked

        monkeypatch.setattr(refine_module, "continue_local_search", without_a_seed)
    upd = update(tmp_path / "run", seeds=new_seeds)
    ref = aligner.align(d / "a.tsv", d / "b.tsv", d / "p.tsv", seeds=new_seeds, refine_starts=1)
    _agree(upd, ref)
    assert np.isin(upd.problem.seed_index, upd.matching.index).all()
    how = upd.summary["update"]["refine"]
    if drop:
        assert how["mode"] == "full" and how["reason"] == "the continued search ended without a seed pair: refined as align"
    else:  # the search reached the rotation itself
        assert how["mode"] == "continued"


@pytest.mark.parametrize("refined", [False, None])
def test_seed_pairs_refine_as_align_when_the_previous_refinement_was_not_used(seeded, refined, tmp_path, monkeypatch):
    # the state's record decides (None: a state written before it was kept); set by hand here
    d, a, b, prior = seeded
    first = aligner.align(d / "a.tsv", d / "b.tsv", d / "p.tsv", seeds=d / "s.tsv", refine_starts=1)
    _written_with(first, tmp_path / "run", monkeypatch, {"refined": refined})
    upd = update(tmp_path / "run", seeds=d / "s.tsv")
    _agree(upd, aligner.align(d / "a.tsv", d / "b.tsv", d / "p.tsv", seeds=d / "s.tsv", refine_starts=1))
    how = upd.summary["update"]["refine"]
    assert how["mode"] == "full" and how["reason"].startswith("the run has seed pairs, and the previous run's")
    assert ("was not used" if refined is False else "does not say") in how["reason"]


@pytest.mark.parametrize("marked", [True, False])
def test_a_run_with_seeds_takes_the_prior_from_its_candidates(seeded, marked, tmp_path, monkeypatch):
    # Reference: aligner.align reading the prior file. The state marks the candidates there only
    # as seed pairs (prior 0), so the update takes the prior's candidates from the state and adds
    # the seed pairs again: the same candidates with the same prior as align's, and the prior file
    # is not read again (the reader is watched). A state that does not mark them (written before
    # it did; here the array is left out by hand) has the file read.
    import aligner.io.inputs as inputs_module

    d, a, b, prior = seeded
    truth = pd.read_csv(d / "s.tsv", sep="\t", dtype=str)
    seeds = truth.iloc[:20].copy()
    seeds.iloc[:3, 1] = truth.iloc[20:23, 1].to_numpy()  # three seed pairs the prior hardly names
    seeds = _write(tmp_path, "s.tsv", seeds)
    first = aligner.align(d / "a.tsv", d / "b.tsv", d / "p.tsv", seeds=seeds)
    added = first.state()[0]["seed_added"]
    assert len(added) and (first.candidates.prior[added] == 0).all()  # seed pairs the prior's top-k lacked
    _written_with(first, tmp_path / "run", monkeypatch, without=None if marked else "seed_added")
    b2 = b.copy()
    b2.iloc[[3, 30, 300], 1] = b2.iloc[[4, 31, 301], 1].to_numpy()
    new_b = _write(tmp_path, "b2.tsv", b2)
    read = []
    real_table = inputs_module.as_table
    monkeypatch.setattr(inputs_module, "as_table", lambda obj, **kw: read.append(kw.get("name")) or
                        real_table(obj, **kw))
    upd = update(tmp_path / "run", network_b=new_b)
    monkeypatch.undo()
    assert ("prior" in read) == (not marked)
    ref = aligner.align(d / "a.tsv", new_b, d / "p.tsv", seeds=seeds)
    np.testing.assert_array_equal(upd.candidates.pairs, ref.candidates.pairs)
    np.testing.assert_array_equal(upd.candidates.prior, ref.candidates.prior)
    assert upd.summary["inputs"]["prior"] == ref.summary["inputs"]["prior"]
    _agree(upd, ref)


@pytest.mark.parametrize("starts", [1, None])
def test_seed_pairs_the_run_held_stay_held_in_the_continued_search(seeded, starts, tmp_path):
    # two swapped seed pairs: align's free refinement gives one up, so it refines again with them
    # held (aligner.core.refine.refine_from_starts); the update's search then holds them too and
    # continues. Reference: align on the new inputs with the same seeds.
    d, a, b, prior = seeded
    truth = pd.read_csv(d / "s.tsv", sep="\t", dtype=str)
    seeds = truth.copy()
    seeds.iloc[[0, 1], 1] = truth.iloc[[1, 0], 1].to_numpy()
    seeds = _write(tmp_path, "s_swapped.tsv", seeds)
    first = aligner.align(d / "a.tsv", d / "b.tsv", d / "p.tsv", seeds=seeds, refine_starts=starts)
    assert first.state()[1]["seeds_held"] is True
    write_outputs(tmp_path / "run", first)
    rng = np.random.default_rng(17)
    b2 = b.copy()
    rows = rng.choice(len(b2), len(b2) // 1000 + 1, replace=False)
    b2.iloc[rows, 1] = rng.choice(b2.iloc[:, 0].unique(), len(rows))
    new_b = _write(tmp_path, "b2.tsv", b2)
    upd = update(tmp_path / "run", network_b=new_b)
    ref = aligner.align(d / "a.tsv", new_b, d / "p.tsv", seeds=seeds, refine_starts=starts)
    _agree(upd, ref)
    assert np.isin(upd.problem.seed_index, upd.matching.index).all()
    how = upd.summary["update"]["refine"]
    assert how["mode"] == "continued" and how["reason"].endswith("the seed pairs held")
    assert upd.state()[1]["seeds_held"] is True  # and so will the next update's
