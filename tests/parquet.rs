//! Parquet files: the same table as a CSV gives byte-identical results,
//! and bad files get the same one-line errors as bad CSVs. The Parquet
//! files are written here with the `parquet` crate's own writer, so the
//! reader is checked against an independent encoder of the format.

use parquet::data_type::{BoolType, ByteArray, ByteArrayType, DoubleType, Int64Type};
use parquet::file::properties::WriterProperties;
use parquet::file::writer::SerializedFileWriter;
use parquet::schema::parser::parse_message_type;
use std::path::Path;
use std::process::Command;
use std::sync::Arc;

/// A delivery-like table: text, a number with gaps, a count, a flag and
/// the outcome.
struct Rows {
    region: Vec<String>,
    km: Vec<Option<f64>>,
    stops: Vec<i64>,
    rain: Vec<bool>,
    late: Vec<String>,
}

fn rows() -> Rows {
    let mut r = Rows {
        region: Vec::new(),
        km: Vec::new(),
        stops: Vec::new(),
        rain: Vec::new(),
        late: Vec::new(),
    };
    for i in 0..400u32 {
        let km = f64::from((i * 7919) % 1000) / 37.0;
        r.region
            .push(["north", "south", "east", "west"][(i % 4) as usize].into());
        r.km.push((i % 23 != 0).then_some(km));
        r.stops.push(i64::from(i % 9));
        r.rain.push(i % 5 == 0);
        let late = km > 15.0 || (i % 5 == 0 && i % 3 == 0);
        r.late.push(if late { "yes" } else { "no" }.into());
    }
    r
}

fn write_csv(r: &Rows, path: &Path) {
    let mut s = String::from("region,km,stops,rain,late\n");
    for i in 0..r.late.len() {
        let km = r.km[i].map_or(String::new(), |v| v.to_string());
        s.push_str(&format!(
            "{},{km},{},{},{}\n",
            r.region[i], r.stops[i], r.rain[i], r.late[i]
        ));
    }
    std::fs::write(path, s).unwrap();
}

fn write_parquet(r: &Rows, path: &Path, km_type: &str) {
    let schema = Arc::new(
        parse_message_type(&format!(
            "message t {{ REQUIRED BINARY region (UTF8); OPTIONAL {km_type} km; REQUIRED INT64 stops; REQUIRED BOOLEAN rain; REQUIRED BINARY late (UTF8); }}"
        ))
        .unwrap(),
    );
    let props = Arc::new(WriterProperties::builder().build());
    let mut writer =
        SerializedFileWriter::new(std::fs::File::create(path).unwrap(), schema, props).unwrap();
    let mut group = writer.next_row_group().unwrap();
    let text = |v: &[String]| -> Vec<ByteArray> { v.iter().map(|s| s.as_str().into()).collect() };
    let mut column = 0;
    while let Some(mut c) = group.next_column().unwrap() {
        match column {
            0 => {
                c.typed::<ByteArrayType>()
                    .write_batch(&text(&r.region), None, None)
                    .unwrap();
            }
            1 => {
                let present: Vec<f64> = r.km.iter().flatten().copied().collect();
                let levels: Vec<i16> = r.km.iter().map(|v| i16::from(v.is_some())).collect();
                if km_type == "DOUBLE" {
                    c.typed::<DoubleType>()
                        .write_batch(&present, Some(&levels), None)
                        .unwrap();
                } else {
                    // Raw bytes, a type candor does not read.
                    let bytes: Vec<ByteArray> = present
                        .iter()
                        .map(|v| v.to_string().as_str().into())
                        .collect();
                    c.typed::<ByteArrayType>()
                        .write_batch(&bytes, Some(&levels), None)
                        .unwrap();
                }
            }
            2 => {
                c.typed::<Int64Type>()
                    .write_batch(&r.stops, None, None)
                    .unwrap();
            }
            3 => {
                c.typed::<BoolType>()
                    .write_batch(&r.rain, None, None)
                    .unwrap();
            }
            _ => {
                c.typed::<ByteArrayType>()
                    .write_batch(&text(&r.late), None, None)
                    .unwrap();
            }
        }
        c.close().unwrap();
        column += 1;
    }
    group.close().unwrap();
    writer.close().unwrap();
}

fn candor(dir: &Path, args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_candor"))
        .args(args)
        .current_dir(dir)
        .output()
        .unwrap()
}

fn manifest(dir: &Path, file: &str) -> String {
    let name = format!("{file}.toml");
    std::fs::write(
        dir.join(&name),
        format!("name = \"{file}\"\ncalibrators = [\"platt\", \"isotonic\"]\n[[dataset]]\nname = \"parcels\"\npath = \"{file}\"\ntarget = \"late\"\npositive = \"yes\"\n[[family]]\nname = \"logistic\"\n[[family]]\nname = \"decision_tree\"\n"),
    )
    .unwrap();
    name
}

/// summary.csv without the columns that name the manifest.
fn results(dir: &Path, file: &str) -> Vec<String> {
    let text = std::fs::read_to_string(dir.join("results").join(file).join("summary.csv")).unwrap();
    let mut r = csv::Reader::from_reader(text.as_bytes());
    let header = r.headers().unwrap().clone();
    let keep: Vec<usize> = (0..header.len())
        .filter(|&i| !matches!(&header[i], "manifest_sha256" | "candor_version"))
        .collect();
    r.records()
        .map(|rec| {
            let rec = rec.unwrap();
            keep.iter().map(|&i| &rec[i]).collect::<Vec<_>>().join(",")
        })
        .collect()
}

#[test]
fn a_parquet_file_gives_the_same_results_as_the_same_table_in_csv() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let r = rows();
    write_csv(&r, &dir.join("parcels.csv"));
    // The name does not decide the format; the first bytes do.
    write_parquet(&r, &dir.join("parcels.pq"), "DOUBLE");
    for file in ["parcels.csv", "parcels.pq"] {
        let m = manifest(dir, file);
        let o = candor(dir, &["run", &m, "-q"]);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    }
    let (a, b) = (results(dir, "parcels.csv"), results(dir, "parcels.pq"));
    assert_eq!(a.len(), 2 * 3);
    assert_eq!(a, b);
    // The file's own checksum is recorded.
    let run: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(dir.join("results/parcels.pq/run.json")).unwrap(),
    )
    .unwrap();
    let sha = run["datasets"][0]["sha256"].as_str().unwrap().to_string();
    let bytes = std::fs::read(dir.join("parcels.pq")).unwrap();
    use sha2::Digest;
    let want: String = sha2::Sha256::digest(&bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect();
    assert_eq!(sha, want);
    // data inspect reads it too.
    let o = candor(
        dir,
        &["data", "inspect", "parcels.pq", "-t", "late", "-p", "yes"],
    );
    let out = String::from_utf8_lossy(&o.stdout);
    assert!(
        out.contains("parcels.pq: 400 rows, 4 usable feature columns"),
        "{out}"
    );
}

#[test]
fn bad_parquet_files_get_one_line_errors() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path();
    let r = rows();
    write_parquet(&r, &dir.join("good.parquet"), "DOUBLE");
    // Cut short: the footer is gone.
    let bytes = std::fs::read(dir.join("good.parquet")).unwrap();
    std::fs::write(dir.join("cut.parquet"), &bytes[..bytes.len() / 2]).unwrap();
    // A binary column.
    write_parquet(&r, &dir.join("binary.parquet"), "BINARY");
    for (file, target, want) in [
        (
            "cut.parquet",
            "late",
            "cut.parquet: cannot read it as Parquet",
        ),
        (
            "binary.parquet",
            "late",
            "binary.parquet: column `km` holds binary values",
        ),
        (
            "good.parquet",
            "delayed",
            "good.parquet: no column named `delayed` for the target",
        ),
    ] {
        let o = candor(dir, &["data", "inspect", file, "-t", target, "-p", "yes"]);
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(!o.status.success(), "{file}");
        assert_eq!(err.trim().lines().count(), 1, "{err}");
        assert!(err.contains(want), "{file}: {err}");
    }
}
