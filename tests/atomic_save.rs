//! Model folders survive a SIGKILL at any moment of a save: `gemmule train
//! --out DIR` kills itself at each step of its save (the `GEMMULE_CRASH_AT`
//! test hook) and is killed at 20 seeded moments of whole runs, each time
//! over the model an earlier run saved, and the folder must always load and
//! predict exactly as the old model or as the new one, never a mix; the next
//! complete save leaves only its own files and the user's (the
//! crash-consistency rule of the reliability issue; common practice, no
//! outside source). Also: older folders (model format 1) still load, and a
//! tampered or escaping weights reference is refused.
//!
//! Data: Fisher's iris as shipped in scikit-learn (tests/data/README.md).

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::collections::BTreeMap;
use std::os::unix::process::ExitStatusExt;
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::time::{Duration, Instant};

mod private_dirs;

/// Distinct training seeds (so consecutive saves differ); one reference each.
const SEEDS: [u64; 3] = [1, 2, 3];
/// SIGKILLs during saves.
const KILLS: usize = 20;
/// Two hidden layers of 1024: about 4 MB of weights, so a save takes a
/// visible share of the run and the kills can land inside it.
const GENOME: &str = r#"{"layers":[{"width":1024,"activation":"relu"},{"width":1024,"activation":"relu"}],"training":{"learning_rate":0.001,"batch_size":32}}"#;

fn gemmule() -> Command {
    let mut command = Command::new(env!("CARGO_BIN_EXE_gemmule"));
    command.env("RAYON_NUM_THREADS", "1");
    private_dirs::isolate(&mut command);
    command
}

fn iris() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/iris.csv")
}

fn text(output: &Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&output.stdout),
        String::from_utf8_lossy(&output.stderr)
    )
}

fn train_command(genome: &Path, out: &Path, seed: u64) -> Command {
    let mut command = gemmule();
    command
        .arg("train")
        .arg("--data")
        .arg(iris())
        .arg("--genome")
        .arg(genome)
        .arg("--out")
        .arg(out)
        .args(["--epochs", "1", "--seed", &seed.to_string()]);
    command
}

/// The predictions printed for iris by the model in `dir`.
fn predict(dir: &Path) -> Output {
    gemmule()
        .arg("predict")
        .arg("--model")
        .arg(dir)
        .arg("--data")
        .arg(iris())
        .output()
        .expect("the binary runs")
}

fn predictions(dir: &Path) -> Vec<u8> {
    let output = predict(dir);
    assert!(output.status.success(), "{}", text(&output));
    output.stdout
}

/// The training seed recorded in the folder's model.json.
fn saved_seed(dir: &Path) -> u64 {
    let json = std::fs::read_to_string(dir.join("model.json")).expect("model.json");
    let value: serde_json::Value = serde_json::from_str(&json).expect("JSON");
    value["provenance"]["seed"].as_u64().expect("a seed")
}

fn file_names(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .expect("listable")
        .flatten()
        .filter_map(|entry| entry.file_name().to_str().map(String::from))
        .collect();
    names.sort();
    names
}

/// Trains over `victim` with `seed` and checks the folder afterwards: it
/// describes the model it held before or the new one, and predicts exactly
/// like the reference model of the seed it names. Returns that seed.
fn check_after_kill(
    victim: &Path,
    before: u64,
    seed: u64,
    expected: &BTreeMap<u64, Vec<u8>>,
    what: &str,
) -> u64 {
    let now = saved_seed(victim);
    assert!(
        now == before || now == seed,
        "{what}: model.json names seed {now}, neither the old {before} nor the new {seed}"
    );
    assert!(
        predictions(victim) == expected[&now],
        "{what}: the folder predicts unlike the model of seed {now} it describes"
    );
    now
}

/// The other seed to save over a folder that holds `before`.
fn next_seed(before: u64, turn: usize) -> u64 {
    let seed = SEEDS[(turn + 1) % SEEDS.len()];
    if seed == before {
        SEEDS[(turn + 2) % SEEDS.len()]
    } else {
        seed
    }
}

/// The steps of a save at which `GEMMULE_CRASH_AT` makes the process kill
/// itself, in order, and whether the folder must then hold the new model.
const CRASH_POINTS: [(&str, bool); 5] = [
    ("weights:temp-written", false),
    ("weights:committed", false),
    ("model.json:temp-written", false),
    ("model.json:committed", true),
    ("model:saved", true),
];

#[test]
fn a_save_killed_at_any_moment_leaves_the_old_or_the_new_model() {
    let dir = tempfile::tempdir().expect("temp dir");
    let genome = dir.path().join("genome.json");
    std::fs::write(&genome, GENOME).expect("genome");
    let mut expected = BTreeMap::new();
    let mut run_ms = 0u64;
    for seed in SEEDS {
        let reference = dir.path().join(format!("reference-{seed}"));
        let started = Instant::now();
        let output = train_command(&genome, &reference, seed)
            .output()
            .expect("runs");
        assert!(output.status.success(), "{}", text(&output));
        // Wall time only places the random kills below; no assertion depends on it.
        run_ms = run_ms.max(started.elapsed().as_millis() as u64);
        expected.insert(seed, predictions(&reference));
    }
    let distinct: std::collections::BTreeSet<_> = expected.values().collect();
    assert_eq!(
        distinct.len(),
        SEEDS.len(),
        "the seeds give different models"
    );

    let victim = dir.path().join("victim");
    let output = train_command(&genome, &victim, SEEDS[0])
        .output()
        .expect("runs");
    assert!(output.status.success(), "{}", text(&output));

    // Deterministic kills: the process kills itself at each step of the save
    // (a test hook, src/fsio.rs `crash_point`), twice each, so every step is
    // hit whatever the machine's speed.
    for (turn, (point, new_expected)) in CRASH_POINTS
        .iter()
        .cycle()
        .take(2 * CRASH_POINTS.len())
        .enumerate()
    {
        let before = saved_seed(&victim);
        let seed = next_seed(before, turn);
        let output = train_command(&genome, &victim, seed)
            .env("GEMMULE_CRASH_AT", point)
            .output()
            .expect("runs");
        assert_eq!(
            output.status.signal(),
            Some(9),
            "{point}: the process killed itself there; {}",
            text(&output)
        );
        if point.ends_with("temp-written") {
            assert!(
                file_names(&victim)
                    .iter()
                    .any(|n| n.starts_with(".gemmule-")),
                "{point}: the killed save left its temporary file: {:?}",
                file_names(&victim)
            );
        }
        let now = check_after_kill(&victim, before, seed, &expected, point);
        assert_eq!(
            now == seed,
            *new_expected,
            "{point}: which model the folder holds"
        );
    }

    // Kills at seeded random moments of whole runs: the same rule must hold
    // for every interleaving.
    let mut rng = ChaCha8Rng::seed_from_u64(77);
    let (mut kept_old, mut took_new, mut killed_running) = (0, 0, 0);
    for kill in 0..KILLS {
        let before = saved_seed(&victim);
        let seed = next_seed(before, kill);
        let mut child = train_command(&genome, &victim, seed)
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .spawn()
            .expect("starts");
        std::thread::sleep(Duration::from_millis(rng.gen_range(0..=run_ms)));
        if child.try_wait().expect("status").is_none() {
            killed_running += 1;
        }
        let _ = child.kill();
        child.wait().expect("reaped");
        let now = check_after_kill(&victim, before, seed, &expected, &format!("kill {kill}"));
        if now == before {
            kept_old += 1;
        } else {
            took_new += 1;
        }
    }
    eprintln!(
        "{KILLS} random kills in a {run_ms} ms run: {killed_running} hit a running process; \
         {kept_old} left the old model, {took_new} the new one"
    );
    // A save that completes cleans up what killed saves left behind, and
    // nothing else.
    std::fs::write(victim.join("notes.txt"), b"the user's own file").expect("a user file");
    let output = train_command(&genome, &victim, SEEDS[0])
        .output()
        .expect("runs");
    assert!(output.status.success(), "{}", text(&output));
    let names = file_names(&victim);
    assert_eq!(names.len(), 3, "{names:?}");
    assert!(
        names[0] == "model.json" && names[1] == "notes.txt" && names[2].starts_with("weights-"),
        "{names:?}"
    );
    assert!(predictions(&victim) == expected[&SEEDS[0]]);
}

/// Rewrites the saved folder `dir` the way gemmule 0.1.0 wrote it (model
/// format 1: `model.safetensors`, no "weights" entry).
fn make_format_one(dir: &Path) {
    let path = dir.join("model.json");
    let mut value: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&path).expect("read")).expect("JSON");
    let file = value["weights"]["file"]
        .as_str()
        .expect("a weights file")
        .to_string();
    value.as_object_mut().expect("object").remove("weights");
    value["format"] = 1.into();
    std::fs::write(&path, serde_json::to_vec_pretty(&value).expect("JSON")).expect("write");
    std::fs::rename(dir.join(file), dir.join("model.safetensors")).expect("rename");
}

#[test]
fn older_folders_load_and_bad_weights_references_are_refused() {
    let dir = tempfile::tempdir().expect("temp dir");
    let genome = dir.path().join("genome.json");
    std::fs::write(
        &genome,
        r#"{"layers":[{"width":8,"activation":"relu"}],"training":{"learning_rate":0.01,"batch_size":16}}"#,
    )
    .expect("genome");
    let model = dir.path().join("model");
    let output = train_command(&genome, &model, 5).output().expect("runs");
    assert!(output.status.success(), "{}", text(&output));
    let expected = predictions(&model);

    let old = dir.path().join("old");
    std::fs::create_dir(&old).expect("folder");
    for name in file_names(&model) {
        std::fs::copy(model.join(&name), old.join(&name)).expect("copy");
    }
    make_format_one(&old);
    assert!(
        predictions(&old) == expected,
        "a format-1 folder predicts the same"
    );
    // Saving over an old folder moves it to the new layout.
    let output = train_command(&genome, &old, 5).output().expect("runs");
    assert!(output.status.success(), "{}", text(&output));
    assert!(!old.join("model.safetensors").exists());
    assert!(predictions(&old) == expected);

    let json_path = model.join("model.json");
    let original = std::fs::read_to_string(&json_path).expect("read");
    let value: serde_json::Value = serde_json::from_str(&original).expect("JSON");
    let weights = model.join(value["weights"]["file"].as_str().expect("file"));
    let mut bytes = std::fs::read(&weights).expect("weights");
    let last = bytes.len() - 1;
    bytes[last] ^= 1;
    std::fs::write(&weights, &bytes).expect("tamper");
    let output = predict(&model);
    assert_eq!(output.status.code(), Some(2), "{}", text(&output));
    assert!(
        text(&output).contains("changed or damaged"),
        "{}",
        text(&output)
    );
    bytes[last] ^= 1;
    std::fs::write(&weights, &bytes).expect("restore");

    for (file, expected_message) in [
        ("../escape.safetensors", "not a plain file name"),
        ("/etc/hostname.safetensors", "not a plain file name"),
        ("weights-000000000000.safetensors", "missing"),
    ] {
        let mut changed = value.clone();
        changed["weights"]["file"] = file.into();
        std::fs::write(&json_path, changed.to_string()).expect("write");
        let output = predict(&model);
        assert_eq!(output.status.code(), Some(2), "{file}: {}", text(&output));
        assert!(
            text(&output).contains(expected_message),
            "{file}: {}",
            text(&output)
        );
    }
    std::fs::write(&json_path, &original).expect("restore");
    assert!(predictions(&model) == expected);
}
