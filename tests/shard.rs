//! Sharded runs: several processes on one results folder, each computing
//! its share of the cells, then a merge that must give the bytes a single
//! run gives, also after a shard is killed and rerun.

use candor::experiment::manifest;
use candor::experiment::plan;
use candor::experiment::runner::{load_datasets, shard_costs};
use candor::experiment::shard;
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Output};
use std::time::{Duration, Instant};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn candor(dir: &Path) -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_candor"));
    c.current_dir(dir)
        .env_remove(shard::SLURM_ID)
        .env_remove(shard::K8S_INDEX);
    c
}

/// 2 datasets × 2 families × 2 repeats × 3 folds = 24 cells, with enough
/// bootstrap work per cell that a shard can be stopped midway.
const MANIFEST: &str = r#"
name = "sharded"
seed = 5
calibrators = ["none", "platt", "isotonic", "venn_abers"]
[evaluation]
outer_folds = 3
repeats = 2
inner_folds = 3
bootstrap = 300
[[dataset]]
name = "wine"
bundled = "wine"
[[dataset]]
name = "sonar"
bundled = "sonar"
[[family]]
name = "logreg"
kind = "logistic"
[[family]]
name = "forest"
kind = "random_forest"
"#;

fn setup() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("m.toml"), MANIFEST).unwrap();
    dir
}

fn run_args<'a>(out: &'a str, extra: &[&'a str]) -> Vec<String> {
    let datasets = root().join("datasets");
    let mut args: Vec<String> = ["run", "m.toml", "--out", out, "-q", "-j", "1", "--datasets"]
        .iter()
        .map(|s| s.to_string())
        .collect();
    args.push(datasets.display().to_string());
    args.extend(extra.iter().map(|s| s.to_string()));
    args
}

fn spawn_shard(dir: &Path, out: &str, shard: &str) -> Child {
    candor(dir)
        .args(run_args(out, &["--shard", shard]))
        .spawn()
        .unwrap()
}

fn merge(dir: &Path, out: &str) -> Output {
    let datasets = root().join("datasets");
    candor(dir)
        .args(["merge", out, "-q", "--datasets"])
        .arg(datasets)
        .output()
        .unwrap()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// The result files and every report file, with their bytes.
fn results(dir: &Path) -> Vec<(PathBuf, Vec<u8>)> {
    let tables = ["records.jsonl", "summary.csv", "run.json"].map(|f| dir.join(f));
    let mut out: Vec<(PathBuf, Vec<u8>)> = tables
        .into_iter()
        .chain(walk(&dir.join("report")))
        .map(|p| {
            let bytes = std::fs::read(&p).unwrap();
            (p.strip_prefix(dir).unwrap().to_path_buf(), bytes)
        })
        .collect();
    out.sort();
    out
}

fn assert_same(a: &[(PathBuf, Vec<u8>)], b: &[(PathBuf, Vec<u8>)]) {
    assert_eq!(a.len(), b.len());
    for ((pa, ba), (pb, bb)) in a.iter().zip(b) {
        assert_eq!(pa, pb);
        assert!(ba == bb, "{} differs", pa.display());
    }
}

fn single_run(dir: &Path) -> Vec<(PathBuf, Vec<u8>)> {
    let o = candor(dir).args(run_args("single", &[])).output().unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    results(&dir.join("single"))
}

#[test]
fn concurrent_shards_merge_to_the_bytes_of_a_single_run() {
    let dir = setup();
    let single = single_run(dir.path());
    let mut shards: Vec<Child> = (1..=3)
        .map(|i| spawn_shard(dir.path(), "shared", &format!("{i}/3")))
        .collect();
    for child in &mut shards {
        assert!(child.wait().unwrap().success());
    }
    let o = merge(dir.path(), "shared");
    assert!(o.status.success(), "{}", stderr(&o));
    assert_same(&single, &results(&dir.path().join("shared")));
    let balance = std::fs::read_to_string(dir.path().join("shared/shards/balance.md")).unwrap();
    for s in ["| 1/3 |", "| 2/3 |", "| 3/3 |"] {
        assert!(balance.contains(s), "{balance}");
    }
}

#[test]
fn a_killed_shard_is_named_by_the_merge_and_a_rerun_completes_it() {
    let dir = setup();
    let single = single_run(dir.path());
    for i in [1, 3] {
        let o = candor(dir.path())
            .args(run_args("shared", &["--shard", &format!("{i}/3")]))
            .output()
            .unwrap();
        assert!(o.status.success(), "{}", stderr(&o));
    }
    // Shard 2 is killed with SIGKILL as soon as its first cell is stored.
    let mut victim = spawn_shard(dir.path(), "shared", "2/3");
    let cells = dir.path().join("shared/cells");
    let count = || {
        walk(&cells)
            .iter()
            .filter(|p| p.extension().is_some_and(|e| e == "json"))
            .count()
    };
    let before = count();
    let start = Instant::now();
    while count() == before && start.elapsed() < Duration::from_secs(60) {
        std::thread::sleep(Duration::from_millis(5));
    }
    victim.kill().unwrap();
    victim.wait().unwrap();
    let after = count();
    assert!(after < 24, "shard 2 finished before it could be killed");

    let o = merge(dir.path(), "shared");
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("(shard 2/3)"), "{err}");
    assert!(
        !err.contains("(shard 1/3)") && !err.contains("(shard 3/3)"),
        "{err}"
    );
    assert!(
        err.contains(&format!("{} cell(s) are missing", 24 - after)),
        "{err}"
    );
    assert!(err.contains("rerun shard 2/3"), "{err}");
    assert!(!dir.path().join("shared/summary.csv").exists());

    let o = candor(dir.path())
        .args(run_args("shared", &["--shard", "2/3"]))
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    let o = merge(dir.path(), "shared");
    assert!(o.status.success(), "{}", stderr(&o));
    assert_same(&single, &results(&dir.path().join("shared")));
}

fn walk(dir: &Path) -> Vec<PathBuf> {
    let mut out = Vec::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        let Ok(entries) = std::fs::read_dir(&d) else {
            continue;
        };
        for entry in entries.flatten() {
            let p = entry.path();
            if p.is_dir() {
                stack.push(p);
            } else {
                out.push(p);
            }
        }
    }
    out
}

#[test]
fn the_same_shard_twice_and_a_whole_run_beside_shards_are_refused() {
    let dir = setup();
    let out = dir.path().join("shared");
    std::fs::create_dir_all(&out).unwrap();
    let open = |name: &str| {
        std::fs::OpenOptions::new()
            .create(true)
            .truncate(false)
            .write(true)
            .open(out.join(name))
            .unwrap()
    };
    // Another process holds shard 1/3 (and, as every shard does, a shared
    // hold on the folder).
    let own = open(".candor.shard-1-of-3.lock");
    own.try_lock().unwrap();
    let folder = open(".candor.lock");
    folder.try_lock_shared().unwrap();
    let twice = candor(dir.path())
        .args(run_args("shared", &["--shard", "1/3"]))
        .output()
        .unwrap();
    assert_eq!(twice.status.code(), Some(1));
    assert!(
        stderr(&twice).contains("shard 1/3 is already running"),
        "{}",
        stderr(&twice)
    );
    let whole = candor(dir.path())
        .args(run_args("shared", &[]))
        .output()
        .unwrap();
    assert_eq!(whole.status.code(), Some(1));
    assert!(stderr(&whole).contains("another candor run, shard or merge"));
    let merged = merge(dir.path(), "shared");
    assert_eq!(merged.status.code(), Some(1));
    // Another shard may run beside it.
    let other = candor(dir.path())
        .args(run_args("shared", &["--shard", "3/3"]))
        .output()
        .unwrap();
    assert!(other.status.success(), "{}", stderr(&other));
}

#[test]
fn auto_reads_the_shard_from_slurm_and_kubernetes() {
    let dir = setup();
    let run = |envs: &[(&str, &str)], spec: &str| {
        let mut c = candor(dir.path());
        c.args(run_args("auto", &["--shard", spec]));
        for (k, v) in envs {
            c.env(k, v);
        }
        c.output().unwrap()
    };
    // A Kubernetes Indexed Job's pods get JOB_COMPLETION_INDEX from 0.
    let k8s = run(&[(shard::K8S_INDEX, "0")], "auto/3");
    assert!(k8s.status.success(), "{}", stderr(&k8s));
    assert!(dir.path().join("auto/shards/shard-1-of-3.json").exists());
    // `sbatch --array=1-3` numbers its tasks from 1.
    let slurm = run(
        &[
            (shard::SLURM_ID, "3"),
            (shard::SLURM_MIN, "1"),
            (shard::SLURM_MAX, "3"),
            (shard::SLURM_COUNT, "3"),
        ],
        "auto",
    );
    assert!(slurm.status.success(), "{}", stderr(&slurm));
    assert!(dir.path().join("auto/shards/shard-3-of-3.json").exists());
    let nothing = run(&[], "auto");
    assert_eq!(nothing.status.code(), Some(1));
    assert!(stderr(&nothing).contains("neither SLURM_ARRAY_TASK_ID"));
}

#[test]
fn cost_balancing_keeps_every_shard_near_the_mean_on_the_families_manifest() {
    // 700 cells of very unequal cost (adult's 48,842 rows beside sonar's
    // 208; kNN's quadratic cost beside naive Bayes): by estimated cost, the
    // largest of N shards stays within 5% of the mean for N up to 16, where
    // a plain round-robin of cells in plan order is far off.
    let exp = manifest::load(&root().join("experiments/families.toml")).unwrap();
    let tables = load_datasets(&exp, Some(&root().join("datasets"))).unwrap();
    let cells = plan::cells(&exp);
    let costs = shard_costs(&exp, &tables, &cells);
    for n in [2, 3, 4, 8, 16] {
        let owner = shard::assign(&costs, n);
        let mut load = vec![0.0; n];
        let mut round_robin = vec![0.0; n];
        for (i, &c) in costs.iter().enumerate() {
            load[owner[i]] += c;
            round_robin[i % n] += c;
        }
        let mean = costs.iter().sum::<f64>() / n as f64;
        let worst = load.iter().copied().fold(0.0, f64::max);
        let naive = round_robin.iter().copied().fold(0.0, f64::max);
        assert!(worst / mean <= 1.05, "{n} shards: {}", worst / mean);
        assert!(naive / mean > worst / mean, "{n} shards");
    }
}

#[test]
fn the_kubernetes_template_asks_for_as_many_shards_as_it_runs_pods() {
    // An Indexed Job gives each pod JOB_COMPLETION_INDEX in 0..completions;
    // `--shard auto/N` must name the same N, and every pod must run at once
    // or the shards merely queue. The full schema check is
    // scripts/validate-kubernetes.sh (run by .ci/run).
    let text =
        std::fs::read_to_string(root().join("deploy/kubernetes/candor-shards.yaml")).unwrap();
    let field = |name: &str| -> usize {
        text.lines()
            .find_map(|l| l.trim().strip_prefix(&format!("{name}: ")))
            .unwrap_or_else(|| panic!("no {name}"))
            .trim()
            .parse()
            .unwrap()
    };
    assert!(text.contains("completionMode: Indexed"));
    let n = field("completions");
    assert_eq!(field("parallelism"), n);
    assert!(text.contains(&format!("- auto/{n}")), "--shard auto/{n}");
    let merge =
        std::fs::read_to_string(root().join("deploy/kubernetes/candor-merge.yaml")).unwrap();
    let results = |t: &str| t.contains("/results/quickstart");
    assert!(results(&text) && results(&merge));
}

#[test]
fn the_slurm_templates_read_the_shard_from_the_array() {
    let shards = std::fs::read_to_string(root().join("deploy/slurm/candor-shards.sbatch")).unwrap();
    assert!(shards.contains("--shard \"${SHARD:-auto}\""));
    let submit = std::fs::read_to_string(root().join("deploy/slurm/submit.sh")).unwrap();
    assert!(submit.contains("--array=\"1-$shards\""));
    assert!(submit.contains("--dependency=\"afterok:$array\""));
    for script in ["candor-shards.sbatch", "candor-merge.sbatch", "submit.sh"] {
        let ok = Command::new("bash")
            .arg("-n")
            .arg(root().join("deploy/slurm").join(script))
            .status()
            .unwrap();
        assert!(ok.success(), "{script} is not valid bash");
    }
}

#[test]
fn a_quadratic_family_on_millions_of_rows_is_warned_about_before_the_run() {
    // kNN compares every scored row with every training row; on 2,000,000
    // rows of ten columns the cost model expects hours (about three), and
    // says so with its estimate.
    // Logistic regression on the same table draws no warning.
    let text = "name = \"big\"\n[[dataset]]\nname = \"huge\"\nbundled = \"iris\"\n[[family]]\nname = \"nn\"\nkind = \"knn\"\n[[family]]\nname = \"lr\"\nkind = \"logistic\"\n";
    let exp = manifest::parse(manifest::ManifestSource {
        path: PathBuf::from("big.toml"),
        text: text.into(),
        sha256: String::new(),
    })
    .unwrap();
    let rows = 2_000_000;
    let mut table = candor::data::csv::parse_csv(
        b"a,b,c,d,e,f,g,h,i,j,y\n1,2,3,4,5,6,7,8,9,0,p\n3,4,5,6,7,8,9,0,1,2,q\n".as_slice(),
        "huge.csv",
        "y",
        Some("q"),
    )
    .unwrap();
    table.name = "huge".into();
    table.labels = (0..rows).map(|i| i % 2).collect();
    for (j, column) in table.columns.iter_mut().enumerate() {
        column.data = candor::data::table::ColumnData::Numeric(vec![j as f64; rows]);
    }
    let warnings = shard::slow_family_warnings(&exp, &[table], 2);
    assert_eq!(warnings.len(), 1, "{warnings:?}");
    let w = &warnings[0];
    assert!(
        w.contains("family `nn` (knn) on dataset `huge` (2000000 rows)"),
        "{w}"
    );
    assert!(w.contains("grows with the square of the rows"), "{w}");
    assert!(w.contains("hours for its 5 cells on 2 threads"), "{w}");
    let small =
        candor::data::csv::parse_csv(b"a,y\n1,p\n2,q\n3,p\n".as_slice(), "s.csv", "y", Some("q"))
            .unwrap();
    assert!(shard::slow_family_warnings(&exp, &[small], 2).is_empty());
    // `list families` says which families grow that way.
    let listed = candor(&root()).args(["list", "families"]).output().unwrap();
    let listed = String::from_utf8_lossy(&listed.stdout);
    let knn = listed.lines().find(|l| l.starts_with("knn")).unwrap();
    assert!(
        knn.ends_with("time grows with the square of the rows"),
        "{knn}"
    );
    assert!(!listed
        .lines()
        .any(|l| l.starts_with("logistic") && l.contains("square")));
}
