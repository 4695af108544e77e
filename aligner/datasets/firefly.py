"""The firefly demo scenario: two invented glow-beetle interaction maps with a known alignment.

:func:`build` returns the text of every file of ``demo_pairs/firefly/`` (and statistics for its
README, :func:`readme`). Everything comes from one fixed seed, so the text is the same on every
run; ``scripts/data/make_demo.py`` writes it, and a test checks that ``demo_pairs/firefly/``
equals it byte for byte. The data are entirely synthetic: the species, the proteins and the
interactions are invented.
"""

from __future__ import annotations

import numpy as np

from aligner.datasets.synthetic import evolved_pair, shuffled_rows

SEED = 20240611
N_ANCESTOR = 1400
N_FINAL = (1500, 1480)
P_RETAIN = 0.4
EDGE_NOISE = 0.07
DECOYS = 5
#: similarity s of :func:`evolved_pair` -> bit-score-like number: BITS_OFFSET + BITS_SCALE * s
BITS_OFFSET, BITS_SCALE = 40.0, 280.0
N_SELF_LOOPS = 3  # written on purpose: readers must drop them
N_REPEATS = 6  # edges written twice (once reversed): readers must merge them

SPECIES_A = ("Lampyra vesperis", "LVES", "dusk glow-beetle")
SPECIES_B = ("Lampyra matutina", "LMAT", "dawn glow-beetle")

DATA_FILES = ("network_a.tsv", "network_b.tsv", "prior.tsv", "truth.tsv")
#: the command that writes the files, named in their headers and in the README
COMMAND = "python scripts/data/make_demo.py --scenario firefly"


def _names(prefix: str, n: int, rng: np.random.Generator) -> np.ndarray:
    """n distinct identifiers PREFIX_NNNNN, increasing with the node index."""
    numbers = np.sort(rng.choice(np.arange(1, 10 * n), size=n, replace=False))
    return np.array([f"{prefix}_{k:05d}" for k in numbers])


def _network_text(edges: np.ndarray, names: np.ndarray, species: tuple[str, str, str],
                  rng: np.random.Generator) -> str:
    """An edge file: header comments, then the edges in random order and orientation, with planted
    self-loops and repeated edges."""
    name, prefix, common = species
    n_nodes = len(names)
    rows = shuffled_rows(edges, rng)
    loops = rng.choice(n_nodes, size=N_SELF_LOOPS, replace=False)
    repeats = rows[rng.choice(len(rows), size=N_REPEATS, replace=False)][:, ::-1]
    extra = np.concatenate([np.stack([loops, loops], axis=1), repeats])
    at = np.sort(rng.choice(len(rows) + 1, size=len(extra), replace=True))
    rows = np.insert(rows, at, extra, axis=0)
    lines = [
        f"# Protein interaction map of {name} ({common}), an invented species. Entirely synthetic.",
        f"# {n_nodes} proteins, {len(edges)} distinct interactions; one undirected interaction per line.",
        f"# Includes {N_SELF_LOOPS} self-interactions and {N_REPEATS} repeated interactions on purpose.",
        f"# Written by `{COMMAND}` (seed {SEED}).",
        "node_a\tnode_b",
    ]
    lines += [f"{names[u]}\t{names[v]}" for u, v in rows]
    return "\n".join(lines) + "\n"


def build() -> tuple[dict[str, str], dict[str, object]]:
    """Return the text of every data file and a few statistics for the README."""
    rng = np.random.default_rng(SEED)
    ev = evolved_pair(N_ANCESTOR, n_final=N_FINAL, p_retain=P_RETAIN, edge_noise=EDGE_NOISE,
                      decoys=DECOYS, seed=int(rng.integers(2**32)))

    # proteins left without any interaction after the edge noise would be missing from the
    # network files; drop them (and their prior and truth rows) and renumber the rest
    keep_a = np.bincount(ev.edges_a.ravel(), minlength=ev.n_a) > 0
    keep_b = np.bincount(ev.edges_b.ravel(), minlength=ev.n_b) > 0
    new_a = np.cumsum(keep_a) - 1
    new_b = np.cumsum(keep_b) - 1
    names_a = _names(SPECIES_A[1], int(keep_a.sum()), rng)
    names_b = _names(SPECIES_B[1], int(keep_b.sum()), rng)

    def pairs_ok(p):
        return keep_a[p[:, 0]] & keep_b[p[:, 1]]

    edges_a = new_a[ev.edges_a]
    edges_b = new_b[ev.edges_b]
    ok = pairs_ok(ev.prior_pairs)
    prior = np.stack([new_a[ev.prior_pairs[ok, 0]], new_b[ev.prior_pairs[ok, 1]]], axis=1)
    bits = np.round(BITS_OFFSET + BITS_SCALE * ev.prior_scores[ok], 1)
    truth = ev.truth[pairs_ok(ev.truth)]
    truth = np.stack([new_a[truth[:, 0]], new_b[truth[:, 1]]], axis=1)

    files = {
        "network_a.tsv": _network_text(edges_a, names_a, SPECIES_A, rng),
        "network_b.tsv": _network_text(edges_b, names_b, SPECIES_B, rng),
    }
    # prior: for each protein of A, its hits in B by decreasing bit score (ties by name)
    order = np.lexsort((prior[:, 1], -bits, prior[:, 0]))
    lines = [
        f"# Similarity of {SPECIES_A[0]} proteins (node_a) to {SPECIES_B[0]} proteins (node_b).",
        "# score: bit-score-like similarity, positive, higher = more similar. Entirely synthetic.",
        f"# Written by `{COMMAND}` (seed {SEED}).",
        "node_a\tnode_b\tscore",
    ]
    lines += [f"{names_a[a]}\t{names_b[b]}\t{s:.1f}" for (a, b), s in zip(prior[order], bits[order])]
    files["prior.tsv"] = "\n".join(lines) + "\n"
    lines = [
        f"# True correspondence: {SPECIES_A[0]} and {SPECIES_B[0]} proteins descended from the same",
        "# protein of the common ancestor (a protein may have several partners). Entirely synthetic.",
        f"# Written by `{COMMAND}` (seed {SEED}).",
        "node_a\tnode_b",
    ]
    lines += [f"{names_a[a]}\t{names_b[b]}" for a, b in truth]
    files["truth.tsv"] = "\n".join(lines) + "\n"

    fam_a = np.bincount(ev.ancestor_a[keep_a], minlength=N_ANCESTOR)
    fam_b = np.bincount(ev.ancestor_b[keep_b], minlength=N_ANCESTOR)
    stats = {
        "n_a": len(names_a), "n_b": len(names_b), "e_a": len(edges_a), "e_b": len(edges_b),
        "n_prior": len(prior), "n_truth": len(truth),
        "one_to_one": int(((fam_a == 1) & (fam_b == 1)).sum()),
        "dropped_a": int((~keep_a).sum()), "dropped_b": int((~keep_b).sum()),
        "bits_true": float(np.median(bits[ev.ancestor_a[ev.prior_pairs[ok, 0]]
                                          == ev.ancestor_b[ev.prior_pairs[ok, 1]]])),
        "bits_decoy": float(np.median(bits[ev.ancestor_a[ev.prior_pairs[ok, 0]]
                                           != ev.ancestor_b[ev.prior_pairs[ok, 1]]])),
    }
    return files, stats


def readme(stats: dict[str, object]) -> str:
    """The README.md of the scenario, from the statistics that :func:`build` returns."""
    a, b = SPECIES_A, SPECIES_B
    return f"""# Demo: two invented glow-beetle interaction maps

**Everything here is synthetic.** *{a[0]}* (the {a[2]}) and *{b[0]}* (the {b[2]}) are
invented species, their proteins are invented, and so are their interactions and similarity
scores; no file describes any real organism or any real experiment.

## Scenario

On an imaginary archipelago, one ancestral glow-beetle population split into two sister
species: *{a[0]}*, which flashes at dusk, and *{b[0]}*, which flashes before dawn. Since the
split, each lineage has duplicated some of its genes and rewired some of its protein
interactions. An invented screening consortium mapped the protein interactions of both
species and ran a sequence-similarity search between their proteomes. The task is to align the
two interaction maps: to pair each *{a[1]}* protein with its counterpart in *{b[1]}*. Because
the generator kept track of the whole history, the true counterparts are known: two proteins
correspond when they descend from the same protein of the common ancestor. After duplications a
protein can have more than one true counterpart; {stats["one_to_one"]} ancestral proteins left
exactly one descendant in each species.

## Files

All files are tab-separated UTF-8 text with one header line; lines starting with `#` at the
top are comments that describe the file.

| file | columns | content |
|---|---|---|
| `network_a.tsv` | `node_a`, `node_b` | interactions of *{a[0]}*: {stats["n_a"]} proteins, {stats["e_a"]} distinct undirected interactions |
| `network_b.tsv` | `node_a`, `node_b` | interactions of *{b[0]}*: {stats["n_b"]} proteins, {stats["e_b"]} distinct undirected interactions |
| `prior.tsv` | `node_a`, `node_b`, `score` | {stats["n_prior"]} similarity hits, `node_a` from *{a[0]}*, `node_b` from *{b[0]}* |
| `truth.tsv` | `node_a`, `node_b` | the {stats["n_truth"]} true pairs (*{a[0]}*, *{b[0]}*) |

* Protein identifiers are `{a[1]}_NNNNN` and `{b[1]}_NNNNN` (five digits, not contiguous).
* Each interaction is listed once, in either orientation, except that each network file also
  holds {N_SELF_LOOPS} self-interactions and {N_REPEATS} interactions listed a second time
  (reversed), on purpose: a reader must drop self-loops and merge repeated edges.
* `score` is a bit-score-like similarity: positive, higher means more similar (not an
  E-value). The median score is {stats["bits_true"]:.1f} for true pairs and
  {stats["bits_decoy"]:.1f} for the other hits.

## How it was generated

```
{COMMAND}
```

writes this directory from `aligner.datasets.firefly` (the build configuration ships it with
the package, so that `aligner demo` runs from any directory). The script uses a fixed seed
({SEED}); rerunning it rewrites byte-identical files, and `{COMMAND} --check`
verifies that the files on disk are current.

The generator calls `aligner.datasets.synthetic.evolved_pair`: an ancestral network of {N_ANCESTOR}
proteins is grown by duplication with divergence (each copy keeps each interaction of its
parent with probability {P_RETAIN}); each species then grows from it independently by the same
process to {N_FINAL[0]} and {N_FINAL[1]} proteins; {EDGE_NOISE:.0%} of each species' interactions
are then moved (removed and replaced by as many new random ones); and the proteins of each
species are shuffled. The similarity of two descendants of the same ancestral protein is drawn
around a mean that shrinks by a factor 0.8 per duplication on their lineages since the split;
each *{a[1]}* protein also gets {DECOYS} random hits to unrelated *{b[1]}* proteins with lower
scores. Similarities `s` are written as `{BITS_OFFSET:g} + {BITS_SCALE:g} * s`, rounded to one
decimal. Proteins left without any interaction after the rewiring are left out of all files
({stats["dropped_a"]} of *{a[0]}*, {stats["dropped_b"]} of *{b[0]}*).
"""
