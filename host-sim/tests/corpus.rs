//! The malformed-input corpus (`tests/data/bad/`, cases in its
//! `cases.toml`): each case exits with status 1 and its message, panics
//! nowhere, writes nothing into its output directory, and no file of the
//! corpus changes (every file is hashed before and after).
#![allow(clippy::unwrap_used, clippy::indexing_slicing)]

use std::collections::hash_map::DefaultHasher;
use std::collections::BTreeMap;
use std::hash::{Hash, Hasher};
use std::path::{Path, PathBuf};

#[derive(serde::Deserialize)]
struct Cases {
    case: Vec<Case>,
}

#[derive(serde::Deserialize)]
struct Case {
    args: Vec<String>,
    message: String,
}

fn hashes(dir: &Path) -> BTreeMap<PathBuf, u64> {
    std::fs::read_dir(dir)
        .unwrap()
        .map(|e| {
            let p = e.unwrap().path();
            let mut h = DefaultHasher::new();
            std::fs::read(&p).unwrap().hash(&mut h);
            (p, h.finish())
        })
        .collect()
}

#[test]
fn every_malformed_input_is_refused_with_its_message_and_changes_nothing() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/bad");
    let d = dir.to_str().unwrap();
    let cases: Cases =
        toml::from_str(&std::fs::read_to_string(dir.join("cases.toml")).unwrap()).unwrap();
    assert!(cases.case.len() >= 40, "{}", cases.case.len());
    let before = hashes(&dir);
    // Every input file of the corpus is used by some case.
    for file in before.keys() {
        let name = file.file_name().unwrap().to_str().unwrap();
        assert!(
            name == "cases.toml"
                || cases
                    .case
                    .iter()
                    .any(|c| c.args.iter().any(|a| a.ends_with(&format!("/{name}")))),
            "{name} is in the corpus but no case uses it"
        );
    }
    let mut failures = Vec::new();
    for (k, case) in cases.case.iter().enumerate() {
        let out = std::env::temp_dir().join(format!("humsim-corpus-{}-{k}", std::process::id()));
        let _ = std::fs::remove_dir_all(&out);
        std::fs::create_dir_all(&out).unwrap();
        let o = out.to_str().unwrap();
        let args: Vec<String> = case
            .args
            .iter()
            .map(|a| a.replace("{D}", d).replace("{OUT}", o))
            .collect();
        let run = std::process::Command::new(env!("CARGO_BIN_EXE_humsim"))
            .args(&args)
            .output()
            .unwrap();
        let err = String::from_utf8_lossy(&run.stderr);
        let want = case.message.replace("{D}", d).replace("{OUT}", o);
        if run.status.code() != Some(1) || !err.contains("humsim: error: ") || !err.contains(&want)
        {
            failures.push(format!(
                "{args:?}: status {:?}, expected `{want}` in: {err}",
                run.status.code()
            ));
        }
        assert!(!err.contains("panicked"), "{args:?}: {err}");
        assert!(
            run.stdout.len() <= "time_s,channel,event,value\n".len(),
            "{args:?}"
        );
        let left: Vec<_> = std::fs::read_dir(&out).unwrap().collect();
        assert!(
            left.is_empty(),
            "{args:?} left {left:?} in its output directory"
        );
        assert_eq!(hashes(&dir), before, "{args:?} changed a corpus file");
        std::fs::remove_dir_all(&out).unwrap();
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}
