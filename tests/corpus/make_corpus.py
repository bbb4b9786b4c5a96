"""Writes the bad-input corpus: one folder per case with manifest.toml,
usually data.csv, and expect.txt (a fragment the one-line error must
contain, or "ok" for input that must be accepted). Rerun after editing:
python3 tests/corpus/make_corpus.py"""
import os, random, shutil

HERE = os.path.dirname(os.path.abspath(__file__))
random.seed(3)

def good_rows(n=60):
    rows = []
    for i in range(n):
        a = round(random.gauss(0, 1), 3)
        b = round(random.gauss(0, 1), 3)
        rows.append([str(a), str(b), "yes" if a + random.gauss(0, 1) > 0 else "no"])
    return rows

def csv_text(header, rows, nl="\n"):
    return nl.join([",".join(header)] + [",".join(r) for r in rows]) + nl

MANIFEST = """name = "corpus"
seed = 1
calibrators = ["none", "platt"]
metrics = ["ece", "brier"]
[evaluation]
outer_folds = 3
inner_folds = 3
bootstrap = 0
[[dataset]]
name = "d"
path = "data.csv"
target = "y"
positive = "yes"
[[family]]
name = "lr"
kind = "logistic"
"""

def case(name, expect, data=None, manifest=MANIFEST):
    d = os.path.join(HERE, name)
    os.makedirs(d, exist_ok=True)
    with open(os.path.join(d, "manifest.toml"), "w") as f:
        f.write(manifest)
    if data is not None:
        mode = "wb" if isinstance(data, bytes) else "w"
        with open(os.path.join(d, "data.csv"), mode, **({} if mode == "wb" else {"newline": ""})) as f:
            f.write(data)
    with open(os.path.join(d, "expect.txt"), "w") as f:
        f.write(expect + "\n")

for entry in os.listdir(HERE):
    if os.path.isdir(os.path.join(HERE, entry)):
        shutil.rmtree(os.path.join(HERE, entry))

H = ["a", "b", "y"]
rows = good_rows()
# Malformed CSV.
bad = [r[:] for r in rows]; bad[10] = bad[10] + ["7"]
case("csv_ragged_row", "data.csv:12", csv_text(H, bad))
case("csv_bad_quoting", "data.csv", csv_text(H, rows).replace("\n" + ",".join(rows[5]), "\n\"" + ",".join(rows[5]), 1))
case("csv_bom_is_accepted", "ok", "\ufeff" + csv_text(H, rows))
case("csv_crlf_is_accepted", "ok", csv_text(H, rows, "\r\n"))
case("csv_not_utf8", "data.csv", csv_text(H, rows).encode() .replace(b"yes", b"y\xe9s", 1))
case("csv_empty_file", "data.csv", "")
case("csv_header_only", "data.csv", csv_text(H, []))
case("csv_duplicate_column_names", "data.csv", csv_text(["a", "a", "y"], rows))
case("csv_blank_target_label", "data.csv:6", csv_text(H, [r if i != 4 else r[:2] + [""] for i, r in enumerate(rows)]))
# Targets.
case("target_one_class", "single class", csv_text(H, [r[:2] + ["yes"] for r in rows]))
case("target_missing_column", "`y`", csv_text(["a", "b", "label"], rows))
case("target_ten_thousand_values", "10000 distinct values", csv_text(H, [[str(random.random()), str(random.random()), str(i)] for i in range(10000)]),
     MANIFEST.replace('positive = "yes"\n', ""))
case("target_positive_label_absent", "`maybe`", csv_text(H, rows), MANIFEST.replace('positive = "yes"', 'positive = "maybe"'))
# Feature values.
case("feature_nan", "data.csv", csv_text(H, [r if i != 7 else ["NaN"] + r[1:] for i, r in enumerate(rows)]))
case("feature_inf", "data.csv", csv_text(H, [r if i != 7 else ["inf"] + r[1:] for i, r in enumerate(rows)]))
case("feature_huge_number", "data.csv", csv_text(H, [r if i != 7 else ["1e309"] + r[1:] for i, r in enumerate(rows)]))
case("feature_all_constant", "constant", csv_text(H, [["1", "2", r[2]] for r in rows]))
case("feature_all_missing", "no usable feature columns", csv_text(H, [["", "", r[2]] for r in rows]))
# Manifests.
case("manifest_path_missing", "nothing.csv", None, MANIFEST.replace('path = "data.csv"', 'path = "nothing.csv"'))
case("manifest_unknown_family", "manifest.toml:16", csv_text(H, rows), MANIFEST.replace('kind = "logistic"', 'kind = "deep_forest"'))
case("manifest_unknown_method", "manifest.toml:3", csv_text(H, rows), MANIFEST.replace('"platt"]', '"spline"]'))
case("manifest_unknown_metric", "manifest.toml:4", csv_text(H, rows), MANIFEST.replace('"brier"]', '"sharpness"]'))
case("manifest_folds_exceed_rarest_class", "fold", csv_text(H, [r[:2] + ["yes" if i < 2 else "no"] for i, r in enumerate(rows)]))
case("manifest_seed_not_integer", "manifest.toml:2", csv_text(H, rows), MANIFEST.replace("seed = 1", 'seed = "one"'))
case("manifest_malformed_toml", "manifest.toml", csv_text(H, rows), MANIFEST.replace("[evaluation]", "[evaluation"))
case("manifest_unknown_key", "manifest.toml", csv_text(H, rows), MANIFEST.replace("bootstrap = 0", "bootstrap = 0\nshuffle = true"))
case("manifest_zero_folds", "manifest.toml:6", csv_text(H, rows), MANIFEST.replace("outer_folds = 3", "outer_folds = 0"))
case("manifest_empty", "manifest.toml", None, "")
case("manifest_unknown_parameter", "manifest.toml", csv_text(H, rows), MANIFEST + "params = { depth = 3 }\n")
# The output folder.
case("output_unwritable", "--out", csv_text(H, rows))
