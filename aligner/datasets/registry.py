"""The registry demo scenario: two invented trade registries' records of the same companies.

:func:`build` returns the text of every file of ``demo_pairs/registry/`` (and statistics for its
README, :func:`readme`). Everything comes from one fixed seed, so the text is the same on every
run; ``scripts/data/make_demo.py`` writes it, and a test checks that
``demo_pairs/registry/`` equals it byte for byte. :func:`company_names` and :func:`corrupt` also
serve the label-prior benchmark. The data are entirely synthetic: the registries, the
companies, their names and their contracts are invented.
"""

from __future__ import annotations

import numpy as np

from aligner.datasets.synthetic import powerlaw_graph, shuffled_rows
from aligner.priors.labels import label_prior

SEED = 20240917
N_COMPANIES = 1500
ATTACH_M = 4  # supply contracts made by each newly registered company (powerlaw_graph's m)
TRIANGLE_P = 0.3
EDGE_NOISE = 0.05  # share of registry A's contracts that registry B does not record, replaced by others
#: mean size of a family of similarly named firms sharing one invented stem (geometric sizes)
FAMILY_MEAN = 8.0
#: corruption of registry B's copy of a name: probability of each step
P_DROP_QUALIFIER = 0.6  # the branch or division word ("North", "Marine") is left out
P_ABBREVIATE = 0.6  # each abbreviable word is abbreviated (Limited -> Ltd, ...)
P_DROP_SUFFIX = 0.3  # the legal suffix is left out
P_REORDER = 0.15  # the qualifier is moved to the front, or two words swapped
P_TYPO = 0.5  # a misspelling (a second one with probability P_TYPO ** 2): swap, drop or double a letter
TOP_K = 10
MIN_SIMILARITY = 0.1

REGISTRY_A = ("Corvalen Chamber of Trade", "R1")
REGISTRY_B = ("Ostrevia Commerce Bureau", "R2")

DATA_FILES = ("network_a.tsv", "network_b.tsv", "labels_a.tsv", "labels_b.tsv", "prior.tsv", "truth.tsv")
#: the command that writes the files, named in their headers and in the README
COMMAND = "python scripts/data/make_demo.py --scenario registry"

ONSETS = ("b", "br", "d", "dr", "f", "g", "gr", "k", "kr", "l", "m", "n", "p", "pr", "r", "s", "st", "t",
          "tr", "v", "z", "th", "qu", "h", "j", "c", "cl", "pl")
VOWELS = ("a", "e", "i", "o", "u", "ae", "ia", "ou", "y")
CODAS = ("", "", "", "n", "r", "l", "x", "s", "nt", "rk", "m", "st", "v", "nd")
ENDINGS = ("", "a", "ex", "on", "ia", "is", "ar", "ic", "ent", "or", "um", "ava", "ine")
INDUSTRY = ("Freight", "Logistics", "Foods", "Textiles", "Timber", "Marine", "Steel", "Chemicals", "Motors",
            "Engineering", "Packaging", "Mining", "Pharma", "Paper", "Glass", "Ceramics", "Electric", "Plastics",
            "Grain", "Dairy", "Shipping", "Tools", "Cables", "Pumps", "Fabrics", "Metals", "Optics", "Printing")
QUALIFIERS = ("North", "South", "East", "West", "Central", "Coastal", "Highland", "Valley", "Harbour", "Trading",
              "Services", "Supply", "Works", "Holdings", "Group", "Industries", "Partners", "Brothers",
              "International", "Products", "Systems", "Solutions", "Distribution", "Manufacturing")
SUFFIXES = ("Limited", "Limited", "Company", "Corporation", "Incorporated", "and Company", "Limited Partnership",
            "Public Limited Company", "")
ABBREVIATIONS = {
    "Limited": "Ltd", "Company": "Co", "Corporation": "Corp", "Incorporated": "Inc", "International": "Intl",
    "and": "&", "Brothers": "Bros", "Services": "Svcs", "Manufacturing": "Mfg", "Engineering": "Eng",
    "Distribution": "Distr", "Industries": "Ind", "Partnership": "Ptnr", "Public": "Pub", "Products": "Prods",
    "Holdings": "Hldgs", "Logistics": "Log", "Chemicals": "Chem", "Systems": "Sys", "Central": "Ctrl",
}
SUFFIX_WORDS = {"Limited", "Company", "Corporation", "Incorporated", "and", "Partnership", "Public"}


#: syllables of every invented stem: with fewer, random stems too often spell a real trade name
STEM_SYLLABLES = 3


def _dictionary() -> frozenset[str]:
    """English words (lower case) that no stem may spell, from the word lists the ``english-words``
    package ships (web2 and GCIDE); needed only to generate the demo, so it is in the test extra."""
    try:
        from english_words import get_english_words_set
    except ImportError as exc:  # pragma: no cover - the test extra installs it
        raise ImportError("generating the registry demo needs the english-words package "
                          "(pip install -e '.[test]')") from exc
    return frozenset(get_english_words_set(["web2", "gcide"], lower=True, alpha=True))


def _stem(rng: np.random.Generator) -> str:
    parts = []
    for _ in range(STEM_SYLLABLES):
        parts.append(ONSETS[rng.integers(len(ONSETS))] + VOWELS[rng.integers(len(VOWELS))])
    word = "".join(parts) + CODAS[rng.integers(len(CODAS))] + ENDINGS[rng.integers(len(ENDINGS))]
    return word[:1].upper() + word[1:]


def _bare(stem: str) -> str:
    """The stem without the longest of :data:`ENDINGS` it ends with (lower case)."""
    low = stem.lower()
    for end in sorted(ENDINGS, key=len, reverse=True):
        if end and low.endswith(end) and len(low) > len(end):
            return low[: -len(end)]
    return low


def company_names(n: int, rng: np.random.Generator) -> tuple[list[list[str]], np.ndarray]:
    """n distinct names as word lists (stem, industry, [qualifier], suffix words); family of each."""
    names: list[list[str]] = []
    family: list[int] = []
    seen: set[str] = set()
    stems: set[str] = set()
    words_list = _dictionary()
    fam = 0
    while len(names) < n:
        stem = _stem(rng)
        # invented only: no dictionary word, with or without its ending
        if stem in stems or stem.lower() in words_list or _bare(stem) in words_list:
            continue
        stems.add(stem)
        size = min(int(rng.geometric(1.0 / FAMILY_MEAN)), n - len(names))
        industries = rng.choice(len(INDUSTRY), size=2, replace=False)
        made = 0
        tries = 0
        while made < size and tries < 50:
            tries += 1
            # most of a family share the first industry word; members differ by qualifier
            ind = INDUSTRY[industries[0] if rng.random() < 0.75 else industries[1]]
            words = [stem, ind]
            if size > 1 or rng.random() < 0.3:
                words.append(QUALIFIERS[rng.integers(len(QUALIFIERS))])
            suffix = SUFFIXES[rng.integers(len(SUFFIXES))]
            words += suffix.split()
            key = " ".join(words[:3])  # distinct up to the legal suffix
            if key in seen:
                continue
            seen.add(key)
            names.append(words)
            family.append(fam)
            made += 1
        fam += 1
    return names, np.array(family)


def _typo(word: str, rng: np.random.Generator) -> str:
    if len(word) < 4:
        return word
    i = int(rng.integers(1, len(word) - 1))
    kind = rng.integers(3)
    if kind == 0:  # swap two neighbouring letters
        return word[:i] + word[i + 1] + word[i] + word[i + 2:]
    if kind == 1:  # drop a letter
        return word[:i] + word[i + 1:]
    return word[:i] + word[i] + word[i:]  # double a letter


def corrupt(words: list[str], rng: np.random.Generator) -> str:
    """Registry B's copy of a name: qualifier dropped, abbreviations, suffix dropped, reorder, typos."""
    n_core = 3 if len(words) > 2 and words[2] in QUALIFIERS else 2
    core, suffix = list(words[:n_core]), list(words[n_core:])
    if n_core == 3 and rng.random() < P_DROP_QUALIFIER:
        core.pop(2)
    if suffix and rng.random() < P_DROP_SUFFIX:
        suffix = []
    if rng.random() < P_REORDER:
        if len(core) == 3 and rng.random() < 0.5:
            core = [core[2], core[0], core[1]]
        else:
            j = int(rng.integers(len(core) - 1))
            core[j], core[j + 1] = core[j + 1], core[j]
    out = core + suffix
    out = [ABBREVIATIONS[w] if w in ABBREVIATIONS and rng.random() < P_ABBREVIATE else w for w in out]
    n_typos = int(rng.random() < P_TYPO) + int(rng.random() < P_TYPO ** 2)
    for _ in range(n_typos):
        j = int(rng.integers(len(out)))
        out[j] = _typo(out[j], rng)
    return " ".join(out)


def _move_edges(edges: np.ndarray, n: int, share: float, rng: np.random.Generator) -> np.ndarray:
    """Remove ``share`` of the edges (never isolating a node) and add as many new random ones."""
    deg = np.bincount(edges.ravel(), minlength=n)
    keep = np.ones(len(edges), dtype=bool)
    n_move = int(round(share * len(edges)))
    moved = 0
    for e in rng.permutation(len(edges)):
        if moved == n_move:
            break
        u, v = edges[e]
        if deg[u] > 1 and deg[v] > 1:
            keep[e] = False
            deg[u] -= 1
            deg[v] -= 1
            moved += 1
    present = set(map(tuple, edges[keep].tolist()))
    original = set(map(tuple, edges.tolist()))
    new = []
    while len(new) < moved:
        u, v = sorted(rng.choice(n, size=2, replace=False).tolist())
        if (u, v) not in present and (u, v) not in original:
            present.add((u, v))
            new.append((u, v))
    out = np.concatenate([edges[keep], np.array(new, dtype=np.int64).reshape(-1, 2)])
    return out[np.lexsort((out[:, 1], out[:, 0]))]


def _ids(prefix: str, n: int, rng: np.random.Generator) -> np.ndarray:
    """n distinct identifiers PREFIX-NNNNNN in random order (they carry no information)."""
    numbers = rng.choice(np.arange(1, 1_000_000), size=n, replace=False)
    return np.array([f"{prefix}-{k:06d}" for k in numbers])


def _network_text(edges: np.ndarray, ids: np.ndarray, registry: tuple[str, str], n_nodes: int,
                  rng: np.random.Generator) -> str:
    """An edge file: header comments, then the contracts in random order and orientation."""
    rows = shuffled_rows(edges, rng)
    lines = [
        f"# Supply contracts between companies on record at the {registry[0]}, an invented registry.",
        f"# {n_nodes} companies, {len(edges)} contracts; one undirected contract per line. Entirely synthetic.",
        f"# Written by `{COMMAND}` (seed {SEED}).",
        "node_a\tnode_b",
    ]
    lines += [f"{ids[u]}\t{ids[v]}" for u, v in rows]
    return "\n".join(lines) + "\n"


def _labels_text(ids: np.ndarray, names: list[str], registry: tuple[str, str]) -> str:
    """A label file: header comments, then one identifier and name per line, by identifier."""
    order = np.argsort(ids)
    lines = [
        f"# Registered names of the companies on record at the {registry[0]}, an invented registry.",
        "# One company per line: identifier, a tab, the name. Entirely synthetic.",
        f"# Written by `{COMMAND}` (seed {SEED}).",
        "node\tlabel",
    ]
    lines += [f"{ids[i]}\t{names[i]}" for i in order]
    return "\n".join(lines) + "\n"


def build() -> tuple[dict[str, str], dict[str, object]]:
    """Return the text of every data file and a few statistics for the README."""
    rng = np.random.default_rng(SEED)
    words, family = company_names(N_COMPANIES, rng)
    names_a = [" ".join(w) for w in words]
    names_b = [corrupt(w, rng) for w in words]
    edges_a = powerlaw_graph(N_COMPANIES, m=ATTACH_M, p=TRIANGLE_P, seed=int(rng.integers(2**32)))
    edges_b = _move_edges(edges_a, N_COMPANIES, EDGE_NOISE, rng)
    # node k of A is company k; company k is node perm[k] of B
    perm = rng.permutation(N_COMPANIES)
    ids_a = _ids(REGISTRY_A[1], N_COMPANIES, rng)
    ids_b = _ids(REGISTRY_B[1], N_COMPANIES, rng)
    ids_b_of_company = ids_b[perm]
    edges_b_nodes = perm[edges_b]
    names_b_by_node = [""] * N_COMPANIES
    for k in range(N_COMPANIES):
        names_b_by_node[perm[k]] = names_b[k]

    files = {
        "network_a.tsv": _network_text(edges_a, ids_a, REGISTRY_A, N_COMPANIES, rng),
        "network_b.tsv": _network_text(edges_b_nodes, ids_b, REGISTRY_B, N_COMPANIES, rng),
        "labels_a.tsv": _labels_text(ids_a, names_a, REGISTRY_A),
        "labels_b.tsv": _labels_text(ids_b, names_b_by_node, REGISTRY_B),
    }
    prior = label_prior(dict(zip(ids_a, names_a)), dict(zip(ids_b, names_b_by_node)), top_k=TOP_K,
                        min_similarity=MIN_SIMILARITY)
    lines = [
        f"# Name similarity of {REGISTRY_A[0]} companies (node_a) to {REGISTRY_B[0]} companies (node_b).",
        f"# score: character 2-4-gram TF-IDF cosine of the names, from aligner.priors.labels.label_prior(top_k={TOP_K},",
        f"# min_similarity={MIN_SIMILARITY}). Entirely synthetic. Written by `{COMMAND}` (seed {SEED}).",
        "node_a\tnode_b\tscore",
    ]
    lines += [f"{a}\t{b}\t{s:.6f}" for a, b, s in prior.itertuples(index=False)]
    files["prior.tsv"] = "\n".join(lines) + "\n"
    order = np.argsort(ids_a)
    lines = [
        f"# True correspondence: the same company on record at the {REGISTRY_A[0]} (node_a)",
        f"# and at the {REGISTRY_B[0]} (node_b). Entirely synthetic.",
        f"# Written by `{COMMAND}` (seed {SEED}).",
        "node_a\tnode_b",
    ]
    lines += [f"{ids_a[k]}\t{ids_b_of_company[k]}" for k in order]
    files["truth.tsv"] = "\n".join(lines) + "\n"

    truth_key = set(zip(ids_a, ids_b_of_company))
    in_prior = sum((a, b) in truth_key for a, b in zip(prior["node_a"], prior["node_b"]))
    sizes = np.bincount(family)
    stats = {
        "n": N_COMPANIES, "e_a": len(edges_a), "e_b": len(edges_b), "n_prior": len(prior),
        "truth_in_prior": in_prior, "n_families": len(sizes), "largest_family": int(sizes.max()),
        "in_families": int((sizes[family] >= 2).sum()),
        "examples": [(names_a[k], names_b[k]) for k in rng.choice(N_COMPANIES, size=6, replace=False)],
    }
    return files, stats


def readme(stats: dict[str, object]) -> str:
    """The README.md of the scenario, from the statistics that :func:`build` returns."""
    return _readme_files(stats) + _readme_generation(stats)


def _readme_files(stats: dict[str, object]) -> str:
    a, b = REGISTRY_A, REGISTRY_B
    examples = "\n".join(f"| {x} | {y} |" for x, y in stats["examples"])
    return f"""# Demo: two invented trade registries' records of the same companies

**Everything here is synthetic.** The {a[0]} and the {b[0]} are invented registries, the
{stats["n"]} companies are invented (their names are random syllables joined to industry words and
legal suffixes), and so are their supply contracts; no file describes any real firm.

## Scenario

Two trade registries hold records of the same {stats["n"]} companies, under their own identifiers
(`{a[1]}-NNNNNN` and `{b[1]}-NNNNNN`, random numbers that carry no information), and each records
the supply contracts between them. The task is deduplication: to pair each record of the
{a[0]} with the record of the same company at the {b[0]}. The registered names are the obvious
clue, but the {b[0]}'s clerks copy them loosely (abbreviations, misspellings, a dropped branch
or legal suffix, words in another order), and many companies belong to families of similarly
named firms (branches and divisions sharing one stem), so that names alone pair a fair share of
companies with a sister firm. The contract networks tell the sisters apart.

Examples (the {a[0]}'s name, then the {b[0]}'s copy):

| {a[0]} | {b[0]} |
|---|---|
{examples}

## Files

All files are tab-separated UTF-8 text with one header line; lines starting with `#` at the
top are comments that describe the file.

| file | columns | content |
|---|---|---|
| `network_a.tsv` | `node_a`, `node_b` | contracts on record at the {a[0]}: {stats["n"]} companies, {stats["e_a"]} undirected contracts |
| `network_b.tsv` | `node_a`, `node_b` | contracts on record at the {b[0]}: {stats["n"]} companies, {stats["e_b"]} undirected contracts |
| `labels_a.tsv` | `node`, `label` | the registered name of each company at the {a[0]} |
| `labels_b.tsv` | `node`, `label` | the registered name of each company at the {b[0]} |
| `prior.tsv` | `node_a`, `node_b`, `score` | {stats["n_prior"]} name-similarity pairs from `aligner.priors.labels.label_prior` ({stats["truth_in_prior"]} of them true) |
| `truth.tsv` | `node_a`, `node_b` | the {stats["n"]} true pairs |

Run it from Python:

```python
from aligner.pipeline import align
from aligner.priors.labels import label_prior
prior = label_prior("labels_a.tsv", "labels_b.tsv")
res = align("network_a.tsv", "network_b.tsv", prior, truth="truth.tsv")   # names and contracts
alone = align("network_a.tsv", "network_b.tsv", prior, alpha=0.0, truth="truth.tsv")  # names alone
print(alone.scores.nc, res.scores.nc)
```

`python scripts/bench/bench_labels.py --n 0` prints this comparison; when the files were made it gave
node correctness 0.745 (edge conservation 0.566) for the names alone and 0.987 (0.927) for names
and contracts together.

"""


def _readme_generation(stats: dict[str, object]) -> str:
    return f"""## How it was generated

```
{COMMAND}
```

writes this directory from `aligner.datasets.registry` (the build configuration ships it with the
package). The script uses a fixed seed ({SEED}); rerunning it rewrites byte-identical files,
and `{COMMAND} --check` verifies that the files on disk are current.

* **Names.** {stats["n_families"]} invented stems of {STEM_SYLLABLES} random syllables, none of them (with or
  without its ending) an English word of the web2 and GCIDE word lists of the `english-words`
  package (real trade names are often words; shorter random stems too often spelled one); each stem
  heads a family of firms (geometric sizes, mean {FAMILY_MEAN:g}, largest {stats["largest_family"]};
  {stats["in_families"]} companies have a sister firm) that share one or two industry words and
  differ by a qualifier (a branch such as North or Harbour, or a division such as Holdings),
  followed by a legal suffix (Limited, Company, Corporation, ...). Names are distinct up to the
  suffix.
* **Registry B's copy.** In this order: the qualifier is dropped with probability
  {P_DROP_QUALIFIER:g}; the legal suffix with probability {P_DROP_SUFFIX:g}; with probability
  {P_REORDER:g} the words are reordered (the qualifier moved to the front, or two words swapped);
  each abbreviable word is abbreviated with probability {P_ABBREVIATE:g} (Limited to Ltd, Company to
  Co, International to Intl, and to &, ...); then a misspelling with probability {P_TYPO:g}, and
  a second one with probability {P_TYPO ** 2:.3g}: two neighbouring letters swapped, a letter
  dropped or a letter doubled (in a word of four letters or more).
* **Contracts.** Registry A's network is `aligner.datasets.synthetic.powerlaw_graph({stats["n"]}, m={ATTACH_M},
  p={TRIANGLE_P})` (preferential attachment with triangles: a few large suppliers, many small
  firms). Registry B records the same contracts except {EDGE_NOISE:.0%} of them, replaced by as many
  random ones (never leaving a company without a contract). The companies are shuffled.
* **Prior.** `label_prior(labels_a, labels_b, top_k={TOP_K}, min_similarity={MIN_SIMILARITY})`.
"""
