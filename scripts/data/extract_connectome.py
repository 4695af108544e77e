#!/usr/bin/env python3
"""Extract two adult C. elegans connectomes as undirected edge lists.

Source: the data files shipped in the PyPI package ``cect`` 0.3.5 (C. elegans
Connectome Toolbox, MIT licence).  Only the package's *data files* are read;
none of its Python modules is imported (they need numpy, openpyxl, ... which
this script does not).

Inputs (all inside the ``cect`` package directory):

* ``cache/WitvlietDataReader7.json`` and ``cache/WitvlietDataReader8.json``:
  datasets 7 and 8 (the two adult animals) of Witvliet et al. 2021,
  Nature 596:257, doi:10.1038/s41586-021-03778-8, as cached by cect.  Each
  holds ``nodes`` (cell names) and ``connections`` = {"Generic_CS": square
  matrix of chemical synapse counts, row = presynaptic, column =
  postsynaptic; "Generic_GJ": square matrix of gap-junction counts}.
* ``data/all_cell_info.csv``: one row per cell with its ``Type``.
* ``data/elife-95402-supp2-v1.xlsx`` and ``data/elife-95402-supp3-v1.xlsx``:
  supplementary files 2 (hermaphrodite) and 3 (male-specific neurons) of
  Wang et al. 2024, eLife 13:RP95402, which list every neuron under its
  anatomical class.

Outputs (default directory ``tests/data`` of this repository):

* ``witvliet2021_adult7.tsv``, ``witvliet2021_adult8.tsv``: header
  ``node_a<TAB>node_b<TAB>weight``; one row per unordered neuron pair with
  node_a < node_b; rows sorted.
* ``neuron_classes.tsv``: header ``neuron<TAB>class`` for every neuron that
  appears in at least one of the two edge lists.
* ``README.md``: provenance and the rules below.

Rules:

* Neuron filter: a cell is kept iff its ``Type`` in ``all_cell_info.csv``
  is a *neuronal type*, i.e. a Type that occurs on at least one row whose
  ``Classification`` column is filled in (cect fills Lineage/Classification
  only for neurons; every muscle, glial and other non-neuronal row carries the
  placeholder ``- To be added... -`` there).
* Edge rule: neurons a != b are joined iff there is at least one chemical
  synapse a->b or b->a, or at least one gap junction between them.
  weight = CS[a][b] + CS[b][a] + GJ[a][b].  The gap-junction matrix is taken
  in ONE direction only, because cect's reader writes every electrical
  contact of the source spreadsheet into both GJ[a][b] and GJ[b][a] (the
  matrix is exactly symmetric); adding both directions would count each
  gap junction twice.  Self-loops (diagonal entries) are dropped.
* Class rule: the class is the one under which the neuron is listed in
  Wang et al. 2024 supplementary files 2-3 (the ``Class`` column, which is
  filled only on the first row of each class and is therefore carried down).

The script is deterministic: rerunning it gives byte-identical files.  It
verifies the SHA-256 of every input file, so a different cect release or a
modified copy is detected instead of silently producing other data.

Usage::

    python scripts/data/extract_connectome.py            # install cect if missing
    python scripts/data/extract_connectome.py --cect-dir DIR   # unpacked copy
"""

from __future__ import annotations

import argparse
import csv
import hashlib
import importlib
import importlib.metadata
import importlib.util
import io
import json
import re
import subprocess
import sys
import zipfile
from collections import Counter
from pathlib import Path
from xml.etree import ElementTree

CECT_VERSION = "0.3.5"
CECT_REQUIREMENT = f"cect=={CECT_VERSION}"

DATASETS = {
    # output stem -> (cache file, dataset number in Witvliet et al. 2021)
    "witvliet2021_adult7": ("cache/WitvlietDataReader7.json", 7),
    "witvliet2021_adult8": ("cache/WitvlietDataReader8.json", 8),
}
CELL_INFO = "data/all_cell_info.csv"
CLASS_TABLES = ("data/elife-95402-supp2-v1.xlsx", "data/elife-95402-supp3-v1.xlsx")

# SHA-256 of the input files as shipped in cect 0.3.5.
EXPECTED_SHA256 = {
    "cache/WitvlietDataReader7.json": "aeff178edcc14f5e818f6c54a138bffcfd5aab27dd8153e2906de1fd6cd8669f",
    "cache/WitvlietDataReader8.json": "3d2de8dc9e23f663d074dfbb2371367d64ec64ebc8469234e4f14ef78d539ad7",
    "data/all_cell_info.csv": "63c6fc5f55c90df092b24afe1cbfc96da63f577288e74621d6395fc195e6221d",
    "data/elife-95402-supp2-v1.xlsx": "0013e4b5f366b82a6b0ec0d682c3bace4027545c957823841293de93feafc0e2",
    "data/elife-95402-supp3-v1.xlsx": "34e8fddd31bcb2227d30c31cabb0d0c6d98d477140974d89d48d423987a41724",
}

CHEMICAL = "Generic_CS"
ELECTRICAL = "Generic_GJ"
PLACEHOLDER = "- To be added... -"

REPO_ROOT = Path(__file__).resolve().parents[2]
DEFAULT_OUT = REPO_ROOT / "tests" / "data"


class ExtractionError(RuntimeError):
    """Raised when the cect data do not look as this script expects."""


# --------------------------------------------------------------------------
# Locating the package data
# --------------------------------------------------------------------------


def _is_package_dir(path: Path) -> bool:
    return (path / "cache").is_dir() and (path / "data").is_dir()


def _resolve_cect_dir(path: Path) -> Path:
    """Accept the package directory itself or a directory that contains it."""
    for candidate in (path, path / "cect"):
        if _is_package_dir(candidate):
            return candidate.resolve()
    raise ExtractionError(f"--cect-dir {path}: no cect package (cache/ and data/) found there")


def _find_installed_cect() -> Path | None:
    importlib.invalidate_caches()
    # find_spec on a top-level name locates the package without executing it.
    spec = importlib.util.find_spec("cect")
    if spec is not None and spec.submodule_search_locations:
        for location in spec.submodule_search_locations:
            if _is_package_dir(Path(location)):
                return Path(location).resolve()
    try:
        dist = importlib.metadata.distribution("cect")
    except importlib.metadata.PackageNotFoundError:
        return None
    for f in dist.files or ():
        if f.as_posix() == "cect/" + CELL_INFO:
            return Path(dist.locate_file(f)).resolve().parent.parent
    return None


def _installed_version() -> str | None:
    try:
        return importlib.metadata.version("cect")
    except importlib.metadata.PackageNotFoundError:
        return None


def locate_cect(cect_dir: str | None) -> Path:
    if cect_dir is not None:
        return _resolve_cect_dir(Path(cect_dir))
    version = _installed_version()
    if version is not None and version != CECT_VERSION:
        raise ExtractionError(
            f"cect {version} is installed but {CECT_VERSION} is required; "
            f"run `{sys.executable} -m pip install --no-deps {CECT_REQUIREMENT}` "
            "or pass --cect-dir"
        )
    found = _find_installed_cect() if version is not None else None
    if found is None:
        print(f"installing {CECT_REQUIREMENT} (--no-deps) ...", file=sys.stderr)
        subprocess.run(
            [sys.executable, "-m", "pip", "install", "--no-deps", CECT_REQUIREMENT],
            check=True,
        )
        found = _find_installed_cect()
        if found is None:
            raise ExtractionError("cect was installed but its package directory was not found")
    return found


def report_licence(pkg: Path) -> None:
    """Print the licence recorded in the package metadata (stderr only)."""
    meta_text = None
    for dist_info in sorted(pkg.parent.glob(f"cect-{CECT_VERSION}.dist-info")):
        meta = dist_info / "METADATA"
        if meta.is_file():
            meta_text = meta.read_text(encoding="utf-8")
    if meta_text is None:
        print("licence: no cect dist-info metadata next to the package; not checked", file=sys.stderr)
        return
    fields = [
        line.split(":", 1)[1].strip()
        for line in meta_text.splitlines()
        if line.startswith("License:") or line.startswith("Classifier: License ::")
    ]
    print("licence (package metadata): " + "; ".join(fields), file=sys.stderr)
    if not any("MIT" in f for f in fields):
        print("WARNING: package metadata does not say MIT; update tests/data/README.md", file=sys.stderr)


def verify_inputs(pkg: Path) -> None:
    for rel, expected in EXPECTED_SHA256.items():
        path = pkg / rel
        if not path.is_file():
            raise ExtractionError(f"missing input file {rel} in {pkg}")
        digest = hashlib.sha256(path.read_bytes()).hexdigest()
        if digest != expected:
            raise ExtractionError(f"{rel}: SHA-256 {digest} differs from cect {CECT_VERSION}'s {expected}")


# --------------------------------------------------------------------------
# Reading the inputs
# --------------------------------------------------------------------------


def read_neuron_set(pkg: Path) -> tuple[set[str], dict[str, str], list[str]]:
    """Return (neuron names, cell -> Type, sorted neuronal Types)."""
    text = (pkg / CELL_INFO).read_text(encoding="utf-8")
    rows = list(csv.reader(io.StringIO(text)))
    header = rows[0]
    i_name, i_type, i_class = header.index("Cell name"), header.index("Type"), header.index("Classification")
    cell_type: dict[str, str] = {}
    neuronal_types: set[str] = set()
    for row in rows[1:]:
        if not row:
            continue
        name, typ = row[i_name].strip(), row[i_type].strip()
        if name in cell_type:
            raise ExtractionError(f"{CELL_INFO}: duplicate cell {name}")
        cell_type[name] = typ
        if row[i_class].strip() not in ("", PLACEHOLDER):
            neuronal_types.add(typ)
    neurons = {c for c, t in cell_type.items() if t in neuronal_types}
    return neurons, cell_type, sorted(neuronal_types)


def read_dataset(path: Path) -> tuple[list[str], dict[str, list[list[int]]]]:
    data = json.loads(path.read_text(encoding="utf-8"))
    nodes = [str(n) for n in data["nodes"]]
    if len(set(nodes)) != len(nodes):
        raise ExtractionError(f"{path.name}: duplicate node names")
    n = len(nodes)
    matrices: dict[str, list[list[int]]] = {}
    for key in (CHEMICAL, ELECTRICAL):
        raw = data["connections"][key]
        if len(raw) != n or any(len(r) != n for r in raw):
            raise ExtractionError(f"{path.name}: {key} is not {n}x{n}")
        mat = []
        for r in raw:
            row = []
            for v in r:
                if v < 0 or v != int(v):
                    raise ExtractionError(f"{path.name}: {key} has a non-count entry {v}")
                row.append(int(v))
            mat.append(row)
        matrices[key] = mat
    gj = matrices[ELECTRICAL]
    if any(gj[i][j] != gj[j][i] for i in range(n) for j in range(i + 1, n)):
        # The one-direction rule for gap junctions relies on this.
        raise ExtractionError(f"{path.name}: gap-junction matrix is not symmetric")
    return nodes, matrices


_NS = {"m": "http://schemas.openxmlformats.org/spreadsheetml/2006/main"}


def _col_index(ref: str) -> int:
    letters = re.match(r"[A-Z]+", ref).group(0)
    idx = 0
    for ch in letters:
        idx = idx * 26 + (ord(ch) - 64)
    return idx - 1


def read_xlsx_first_sheet(path: Path) -> list[list[str]]:
    """Minimal .xlsx reader (standard library only): cell texts of sheet 1."""
    with zipfile.ZipFile(path) as zf:
        shared: list[str] = []
        if "xl/sharedStrings.xml" in zf.namelist():
            root = ElementTree.fromstring(zf.read("xl/sharedStrings.xml"))
            for si in root.findall("m:si", _NS):
                shared.append("".join(t.text or "" for t in si.iter(f"{{{_NS['m']}}}t")))
        root = ElementTree.fromstring(zf.read("xl/worksheets/sheet1.xml"))
    table: list[list[str]] = []
    for row in root.iter(f"{{{_NS['m']}}}row"):
        cells: dict[int, str] = {}
        for c in row.findall("m:c", _NS):
            kind = c.get("t")
            if kind == "inlineStr":
                value = "".join(t.text or "" for t in c.iter(f"{{{_NS['m']}}}t"))
            else:
                v = c.find("m:v", _NS)
                value = "" if v is None or v.text is None else v.text
                if kind == "s" and value:
                    value = shared[int(value)]
            cells[_col_index(c.get("r"))] = value
        width = max(cells) + 1 if cells else 0
        table.append([cells.get(i, "") for i in range(width)])
    return table


def _expand_name(name: str) -> list[str]:
    """'DB1/3' -> ['DB1', 'DB3'] (the tables use this for ambiguous IDs)."""
    m = re.fullmatch(r"([A-Za-z]+)(\d+(?:/\d+)+)", name)
    if m:
        return [m.group(1) + num for num in m.group(2).split("/")]
    return [name]


def read_class_table(pkg: Path) -> dict[str, str]:
    neuron_class: dict[str, str] = {}
    for rel in CLASS_TABLES:
        table = read_xlsx_first_sheet(pkg / rel)
        header_row = next(
            i for i, r in enumerate(table) if "Class" in [c.strip() for c in r] and "Neuron" in [c.strip() for c in r]
        )
        header = [c.strip() for c in table[header_row]]
        i_class, i_neuron = header.index("Class"), header.index("Neuron")
        current: str | None = None
        seen = False
        for row in table[header_row + 1 :]:
            cls = row[i_class].strip().strip("*").strip() if i_class < len(row) else ""
            name = row[i_neuron].strip() if i_neuron < len(row) else ""
            if not cls and not name:
                if seen:  # first empty row after the body: footnotes follow
                    break
                continue
            if cls and not name:  # section heading ("HEAD", "TAIL: ...") or footnote
                current = None
                continue
            if cls:
                current = cls
            if not name:
                continue
            if current is None:
                raise ExtractionError(f"{rel}: neuron {name} has no class")
            seen = True
            for n in _expand_name(name):
                if neuron_class.get(n, current) != current:
                    raise ExtractionError(f"{rel}: {n} listed under {neuron_class[n]} and {current}")
                neuron_class[n] = current
    return neuron_class


# --------------------------------------------------------------------------
# Building the networks
# --------------------------------------------------------------------------


def build_edges(nodes: list[str], mats: dict[str, list[list[int]]], neurons: set[str]):
    cs, gj = mats[CHEMICAL], mats[ELECTRICAL]
    keep = sorted((name, i) for i, name in enumerate(nodes) if name in neurons)
    edges: list[tuple[str, str, int]] = []
    for x in range(len(keep)):
        a, i = keep[x]
        for y in range(x + 1, len(keep)):
            b, j = keep[y]
            w = cs[i][j] + cs[j][i] + gj[i][j]
            if w > 0:
                edges.append((a, b, w))
    stats = {
        "cells": len(nodes),
        "neurons": len(keep),
        "dropped_cells": sorted(n for n in nodes if n not in neurons),
        "self_loops_dropped": sum(1 for _, i in keep if cs[i][i] or gj[i][i]),
        "chemical_total": sum(cs[i][j] for _, i in keep for _, j in keep if i != j),
        "electrical_total": sum(gj[i][j] for (_, i) in keep for (_, j) in keep if i < j),
    }
    return edges, stats


def naming_rule_class(name: str) -> str:
    """Cross-check only: class guessed from the name alone.

    Strip a trailing DL/DR/VL/VR (radial six-/four-fold classes) if at least
    three characters remain, else a trailing L/R or D/V if at least three
    characters remain.  The guard keeps e.g. AVDL -> AVD (not AV) and leaves
    three-letter singletons such as AVL, PVR or RID unchanged.
    """
    for suffix in ("DL", "DR", "VL", "VR"):
        if name.endswith(suffix) and len(name) - 2 >= 3:
            return name[:-2]
    if name[-1] in "LRDV" and len(name) - 1 >= 3:
        return name[:-1]
    return name


def _write(path: Path, text: str) -> None:
    path.write_bytes(text.encode("utf-8"))


def _tsv(header: list[str], rows) -> str:
    lines = ["\t".join(header)]
    lines += ["\t".join(str(v) for v in r) for r in rows]
    return "\n".join(lines) + "\n"


def _size_bins(sizes) -> dict[str, int]:
    bins = {"1": 0, "2": 0, "3-6": 0, ">6": 0}
    for s in sizes:
        bins["1" if s == 1 else "2" if s == 2 else "3-6" if s <= 6 else ">6"] += 1
    return bins


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--cect-dir", help="unpacked cect package directory (or a directory containing cect/)")
    parser.add_argument("--out-dir", default=str(DEFAULT_OUT), help="output directory (default: tests/data)")
    args = parser.parse_args(argv)

    pkg = locate_cect(args.cect_dir)
    verify_inputs(pkg)
    report_licence(pkg)

    neurons, cell_type, neuronal_types = read_neuron_set(pkg)
    neuron_class = read_class_table(pkg)

    out = Path(args.out_dir)
    out.mkdir(parents=True, exist_ok=True)

    node_sets: dict[str, set[str]] = {}
    stats: dict[str, dict] = {}
    for stem, (rel, _number) in DATASETS.items():
        nodes, mats = read_dataset(pkg / rel)
        unknown = sorted(n for n in nodes if n not in cell_type)
        if unknown:
            raise ExtractionError(f"{rel}: cells not in {CELL_INFO}: {unknown}")
        edges, st = build_edges(nodes, mats, neurons)
        st["edges"] = len(edges)
        st["weight_total"] = sum(w for _, _, w in edges)
        node_sets[stem] = {a for a, _, _ in edges} | {b for _, b, _ in edges}
        st["nodes"] = len(node_sets[stem])
        st["isolated_neurons"] = sorted(n for n in nodes if n in neurons and n not in node_sets[stem])
        st["dropped_types"] = Counter(cell_type[n] for n in st["dropped_cells"])
        stats[stem] = st
        _write(out / f"{stem}.tsv", _tsv(["node_a", "node_b", "weight"], edges))

    all_nodes = sorted(set().union(*node_sets.values()))
    missing = [n for n in all_nodes if n not in neuron_class]
    if missing:
        raise ExtractionError(f"neurons without a class in the class tables: {missing}")
    _write(out / "neuron_classes.tsv", _tsv(["neuron", "class"], [(n, neuron_class[n]) for n in all_nodes]))

    a_nodes, b_nodes = (node_sets[s] for s in DATASETS)
    shared = a_nodes & b_nodes
    class_sizes = Counter(neuron_class[n] for n in all_nodes)
    size_a = Counter(neuron_class[n] for n in a_nodes)
    size_b = Counter(neuron_class[n] for n in b_nodes)
    size_shared = Counter(neuron_class[n] for n in shared)
    summary = {
        "shared": len(shared),
        "union": len(all_nodes),
        "only": {s: sorted(node_sets[s] - shared) for s in DATASETS},
        "classes": len(class_sizes),
        "bins": _size_bins(class_sizes.values()),
        "pairs_all": sum(size_a[c] * size_b[c] for c in class_sizes),
        "pairs_shared": sum(v * v for v in size_shared.values()),
        "rule_disagree": [
            f"{n} ({neuron_class[n]} vs {naming_rule_class(n)})"
            for n in all_nodes
            if naming_rule_class(n) != neuron_class[n]
        ],
    }
    _write(out / "README.md", render_readme(stats, summary, neuronal_types))

    for stem, st in stats.items():
        print(f"{stem}: {st['nodes']} nodes, {st['edges']} edges", file=sys.stderr)
    print(
        f"shared neurons: {summary['shared']}; classes: {summary['classes']} {summary['bins']}; "
        f"same-class pairs: {summary['pairs_all']} (shared-only: {summary['pairs_shared']})",
        file=sys.stderr,
    )
    return 0


def _dropped(st: dict) -> str:
    return ", ".join(f"{t} ({k})" for t, k in sorted(st["dropped_types"].items()))


def _names(xs) -> str:
    return ", ".join(xs) if xs else "none"


def render_readme(stats: dict, summary: dict, neuronal_types: list[str]) -> str:
    """The README.md of the output directory: sources, files and the neuron filter, then the rules."""
    return _readme_sources(stats, summary, neuronal_types) + _readme_rules(stats, summary)


def _readme_sources(stats: dict, summary: dict, neuronal_types: list[str]) -> str:
    (s7, st7), (s8, st8) = stats.items()
    dropped, names = _dropped, _names
    sha_lines = "\n".join(f"| `cect/{rel}` | `{h}` |" for rel, h in EXPECTED_SHA256.items())
    types_line = "\n".join(f"* {t}" for t in neuronal_types)
    return f"""# Test data: adult *C. elegans* connectomes

Generated by `scripts/data/extract_connectome.py`; do not edit by hand.

## Sources

* Connectomes: Witvliet D, et al. (2021) Connectomes across development reveal
  principles of brain maturation. *Nature* 596:257-261.
  doi:[10.1038/s41586-021-03778-8](https://doi.org/10.1038/s41586-021-03778-8).
  Datasets 7 and 8, the two adult animals of that study (electron-microscopy
  reconstructions of the nerve ring and ventral ganglion, so the networks hold
  head neurons only, not the whole animal).
* Neuron classes: Wang C, et al. (2024) A neurotransmitter atlas of
  *C. elegans* males and hermaphrodites. *eLife* 13:RP95402.
  doi:[10.7554/eLife.95402](https://doi.org/10.7554/eLife.95402),
  supplementary files 2 (hermaphrodite neurons) and 3 (male-specific neurons).
* Both are read from the data files of the PyPI package **cect 0.3.5**
  (C. elegans Connectome Toolbox, OpenWorm). Its metadata says
  `License: MIT` and `Classifier: License :: OSI Approved :: MIT License`, and it
  ships an MIT `LICENSE` file. The underlying data are the cited authors'
  published supplementary material; cite the publications when using them.

| file read | SHA-256 (verified by the script) |
| --- | --- |
{sha_lines}

`WitvlietDataReader7.json` / `WitvlietDataReader8.json` are cect's caches of the
spreadsheets `witvliet_2020_7 adult.xlsx` / `witvliet_2020_8 adult.xlsx` (these
spreadsheets themselves are not in the package; datasets 1-6 are the L1-L3
larval animals). Each JSON holds `nodes` and two square matrices in
`connections`: `Generic_CS` (chemical synapses, row = presynaptic cell,
column = postsynaptic cell) and `Generic_GJ` (gap junctions). Entries are counts
of synapses agreed by at least two of three annotators.

## Files

| file | content |
| --- | --- |
| `{s7}.tsv` | dataset 7: {st7['nodes']} neurons, {st7['edges']} edges |
| `{s8}.tsv` | dataset 8: {st8['nodes']} neurons, {st8['edges']} edges |
| `neuron_classes.tsv` | class of each of the {summary['union']} neurons that occur in either edge list |

Edge lists: tab-separated, header `node_a	node_b	weight`, one row per
unordered pair with `node_a < node_b` (Python string order), rows sorted by
(`node_a`, `node_b`). `neuron_classes.tsv`: header `neuron	class`, sorted by
neuron. UTF-8, `\\n` line ends.

## Neuron filter

`cect/data/all_cell_info.csv` gives each cell a `Type`. cect fills the
`Lineage`/`Classification` columns only for neurons; every muscle, glial cell
and other non-neuronal cell has the placeholder `- To be added... -` as its
Classification (and its Type repeated as Lineage). A cell is kept iff its
`Type` is one that occurs on at least one row with a real Classification.
That gives these neuronal Types (the rule also keeps six male DX/EF neurons
whose own rows lack a Classification, since their Type "Male interneuron" is
neuronal):

{types_line}

As a check, the rule agrees with the Wang et al. (2024) class tables used
below: every hermaphrodite cell it keeps is listed there, and no cell it drops
is (the only mismatches are the male-specific CA01-CA09/CP01-CP09, which the
tables spell CA1-CA9/CP0-CP9, and the tables' extra labels DX4/EF4 from
`DX3/4`, `EF3/4`, which are not cells in `all_cell_info.csv`).

Cells dropped by the filter: dataset 7: {len(st7['dropped_cells'])} cells, {dropped(st7)};
dataset 8: {len(st8['dropped_cells'])} cells, {dropped(st8)}.
All cells of both datasets are listed in `all_cell_info.csv`.
Neurons kept by the filter but without any edge to another neuron (so absent
from the edge list): dataset 7: {names(st7['isolated_neurons'])}; dataset 8: {names(st8['isolated_neurons'])}.

"""


def _readme_rules(stats: dict, summary: dict) -> str:
    (s7, st7), (s8, st8) = stats.items()
    bins, names = summary["bins"], _names
    return f"""## Edge rule

Two distinct neurons a, b are joined iff at least one chemical synapse a->b or
b->a, or at least one gap junction between them, is recorded. The weight is the
total synapse count between them:

    weight = CS[a][b] + CS[b][a] + GJ[a][b]

Chemical synapses are summed over both directions. The gap-junction matrix is
read in one direction only: cect's reader enters each electrical contact of the
source spreadsheet into both `GJ[a][b]` and `GJ[b][a]` (the matrix is exactly
symmetric; the script checks this), so summing both directions would count each
gap junction twice. Self-connections are dropped (neurons with a self-synapse:
dataset 7: {st7['self_loops_dropped']}, dataset 8: {st8['self_loops_dropped']}).

Synapse totals between distinct neurons (= sum of weights):

| dataset | chemical | electrical | total |
| --- | --- | --- | --- |
| 7 | {st7['chemical_total']} | {st7['electrical_total']} | {st7['weight_total']} |
| 8 | {st8['chemical_total']} | {st8['electrical_total']} | {st8['weight_total']} |

## Class rule

The class is the one under which the neuron is listed in Wang et al. (2024)
supplementary files 2-3 (`cect/data/elife-95402-supp2-v1.xlsx`,
`cect/data/elife-95402-supp3-v1.xlsx`): the `Class` column is filled only on
the first row of each class and is carried down to the following rows; section
headings (e.g. `HEAD`) end a class; the first empty row after the table body
ends the table (footnotes follow); stray `*` and spaces around a class name
are removed; a cell such as `DB1/3` is read as both `DB1` and `DB3`. No class
is derived from the name. The published classes group left/right and
radially symmetric members (e.g. `IL1DL IL1DR IL1L IL1R IL1VL IL1VR` -> `IL1`,
`RMED RMEL RMER RMEV` -> `RME`, `SAADL ...` -> `SAA`), and treat unpaired
neurons (e.g. `AVL`, `RIS`) as classes of one.

Cross-check (not used for the output): the naming rule "strip a trailing
DL/DR/VL/VR, else a trailing L/R/D/V, in each case only if at least three
characters remain" disagrees with the published table for
{len(summary['rule_disagree'])} of the {summary['union']} neurons: {names(summary['rule_disagree'])}.
(The length guard matters: without it `AVDL` would become `AV` and unpaired
`AVL`, `PVR`, `RID` would lose a letter.)

Summary: {summary['classes']} classes over the neurons in `neuron_classes.tsv`;
class sizes: {bins['1']} of size 1, {bins['2']} of size 2, {bins['3-6']} of size 3-6,
{bins['>6']} larger than 6. Neurons in both networks: {summary['shared']};
only in dataset 7: {names(summary['only'][s7])}; only in dataset 8:
{names(summary['only'][s8])}. Candidate pairs (a in dataset 7, b in dataset 8,
same class): {summary['pairs_all']} over all nodes, {summary['pairs_shared']}
over shared neurons only.

## Regenerating

From the repository root, with any Python 3.11+ interpreter:

    python scripts/data/extract_connectome.py

It installs `cect==0.3.5` with `python -m pip install --no-deps cect==0.3.5`
into the running interpreter if it is missing (or use
`--cect-dir DIR` to point at an unpacked copy of the package), reads only the
data files listed above (no cect module is imported), checks their SHA-256, and
rewrites these four files; the output is byte-identical on every run.
"""


if __name__ == "__main__":
    try:
        sys.exit(main())
    except ExtractionError as exc:
        print(f"error: {exc}", file=sys.stderr)
        sys.exit(1)
