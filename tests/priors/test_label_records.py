"""Labels from records with several fields (label_columns): the chosen fields joined by a space.

The records are invented: firm, town and street names made of syllables found in no English word
list (checked against the english-words package's web2 and gcide lists in the test below)."""

import pandas as pd
import pytest

from aligner.errors import InputFormatError, InvalidParameterError
from aligner.priors.labels import label_prior, read_label_table

HEAD = "id,name,city,street,phone"
A = ["a1,Quorvel Shipping,Quelbrin,12 Thalmistro Lane,5550101",
     "a2,Quorvel Shipping,Zorvenna,4 Brevoscal Road,5550102",
     'a3,"Ombrin Dairy, Coop",Quelbrin,,5550103']
B = ["b1,Quorvel Shipping Ltd,Zorvenna,4 Brevoscal Rd,5550190",
     "b2,Quorvel Shipping,Quelbrin,12 Thalmistro Ln,5550191",
     "b3,Ombrin Dairy Cooperative,Quelbrin,9 Drelvik Street,5550192"]
INVENTED = ["quorvel", "quelbrin", "thalmistro", "zorvenna", "brevoscal", "ombrin", "drelvik"]


def _write(path, lines):
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return str(path)


def _best(p):
    return dict(zip(*p.loc[p.groupby("node_a")["score"].idxmax(), ["node_a", "node_b"]].T.values))


def test_the_invented_names_are_in_no_word_list():
    from english_words import get_english_words_set

    words = get_english_words_set(["web2", "gcide"], lower=True)
    assert not [w for w in INVENTED if w in words]


def test_fields_are_joined_and_settle_what_the_name_alone_cannot(tmp_path):
    a, b = _write(tmp_path / "a.csv", [HEAD] + A), _write(tmp_path / "b.csv", [HEAD] + B)
    labels = read_label_table(a, "name,city,street")
    # hand-worked: fields joined by a space in the order given, an empty field left out, quotes removed
    assert labels.to_dict() == {"a1": "Quorvel Shipping Quelbrin 12 Thalmistro Lane",
                                "a2": "Quorvel Shipping Zorvenna 4 Brevoscal Road",
                                "a3": "Ombrin Dairy, Coop Quelbrin"}
    # by name alone a1 and a2 read the same and both take b2, the exact name (hand-worked)
    assert _best(label_prior(a, b, label_columns="name", top_k=3)) == {"a1": "b2", "a2": "b2", "a3": "b3"}
    # with the town and the street each finds its own record
    full = label_prior(a, b, label_columns="name,city,street", top_k=3)
    assert _best(full) == {"a1": "b2", "a2": "b1", "a3": "b3"}
    # reference: the Python function on the joined texts given as plain labels; positions pick the same
    joined_b = {r.split(",")[0]: " ".join(r.split(",")[1:4]) for r in B}
    pd.testing.assert_frame_equal(full, label_prior(labels, joined_b, top_k=3))
    # (positions do not imply a header line: header="yes" says there is one)
    pd.testing.assert_frame_equal(full, label_prior(a, b, label_columns="2,3,4", top_k=3, header="yes"))
    # a DataFrame of records (identifier first) by name
    df = pd.read_csv(b, dtype=str, keep_default_na=False)
    pd.testing.assert_frame_equal(full, label_prior(a, df, label_columns="name,city,street", top_k=3))


def test_errors_name_the_file_the_line_and_the_option(tmp_path):
    a = _write(tmp_path / "a.csv", [HEAD] + A)
    with pytest.raises(InputFormatError, match=r"a.csv, line 1: has no column named 'town' \(its columns: id, "
                       r"name, city, street, phone\); check --label-columns name,town"):
        read_label_table(a, "name,town")
    with pytest.raises(InputFormatError, match=r"a.csv, line 2: has 5 columns but --label-columns 2,7 "):
        read_label_table(a, "2,7", header="yes")
    with pytest.raises(InputFormatError, match=r"picked twice .* \(column 1 is always taken\)"):
        read_label_table(a, "id,name")
    dup = _write(tmp_path / "dup.csv", [HEAD] + A + ["a2,Tessaly Glassworks,Zorvenna,,5550104"])
    with pytest.raises(InputFormatError, match=r"dup.csv, line 5: repeats the identifier 'a2' \(first on line 3\)"):
        read_label_table(dup, "name")
    with pytest.raises(InvalidParameterError, match=r"^label_columns must be comma-separated columns"):
        label_prior(a, a, label_columns="name,,city")
