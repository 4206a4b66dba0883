//! furrow never destroys what it did not write (issue 24): `report` is run
//! against folders holding user files (a home-like folder, the plan's own
//! folder, a folder above it, a file, a symbolic link, the current folder,
//! absolute and `..` plan names) and every file under the test's root must
//! still be there byte for byte afterwards. Each regression test is named
//! after the fault it pins.

mod common;

use common::{furrow, project, stderr};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// Every file under `root` (hidden files and subfolders included) with
/// its bytes; symbolic links by their target.
fn tree(root: &Path) -> BTreeMap<PathBuf, Vec<u8>> {
    let mut out = BTreeMap::new();
    let mut stack = vec![root.to_path_buf()];
    while let Some(dir) = stack.pop() {
        for e in std::fs::read_dir(&dir).expect("read a folder") {
            let e = e.expect("an entry");
            let p = e.path();
            let t = e.file_type().expect("a file type");
            let rel = p.strip_prefix(root).expect("under root").to_path_buf();
            if t.is_symlink() {
                let target = std::fs::read_link(&p).expect("a link");
                out.insert(rel, target.to_string_lossy().as_bytes().to_vec());
            } else if t.is_dir() {
                out.insert(rel, b"<dir>".to_vec());
                stack.push(p);
            } else {
                out.insert(rel, std::fs::read(&p).expect("read a file"));
            }
        }
    }
    out
}

/// A home-like folder: notes, a hidden settings file, a subfolder with a
/// hidden folder inside.
fn home_like(at: &Path) {
    std::fs::create_dir_all(at.join("photos/.thumbs")).expect("mkdir");
    std::fs::write(at.join("notes.txt"), b"my notes\n").expect("write");
    std::fs::write(at.join(".settings"), b"colour = green\n").expect("write");
    std::fs::write(at.join("photos/garden.jpg"), [0xff, 0xd8, 0xff, 0x00]).expect("write");
    std::fs::write(at.join("photos/.thumbs/t1"), b"t").expect("write");
}

const FAST: [&str; 3] = ["--scenarios", "200", "--quiet"];

/// Runs `report plan.toml` in the project with `extra` flags and asserts
/// it was refused (exit 1, message containing `why`) and that nothing
/// under `root` changed.
fn refused(root: &Path, dir: &Path, extra: &[&str], why: &str) {
    let before = tree(root);
    let o = furrow(dir, &[&["report", "plan.toml"], extra, &FAST[..]].concat());
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    let err = stderr(&o);
    assert!(err.contains(why), "expected '{why}' in: {err}");
    assert_eq!(tree(root), before, "files changed after: {err}");
}

#[test]
fn out_at_an_existing_user_folder_is_refused_and_every_file_kept() {
    let (tmp, dir) = project();
    let home = tmp.path().join("home");
    home_like(&home);
    let abs = home.display().to_string();
    refused(
        tmp.path(),
        &dir,
        &["--out", &abs],
        "files furrow did not write",
    );
    refused(
        tmp.path(),
        &dir,
        &["--out", "../home"],
        "files furrow did not write",
    );
}

#[test]
fn out_at_the_plan_folder_is_refused() {
    let (tmp, dir) = project();
    let abs = dir.display().to_string();
    refused(tmp.path(), &dir, &["--out", &abs], "which the plan reads");
    // Even when it also carries a marker, as if furrow had written it.
    std::fs::write(dir.join(".furrow-report"), b"").expect("write");
    let parent = tmp.path().display().to_string();
    refused(
        tmp.path(),
        &dir,
        &["--out", &parent],
        "which the plan reads",
    );
}

#[test]
fn out_at_the_models_folder_is_refused() {
    let (tmp, dir) = project();
    refused(
        tmp.path(),
        &dir,
        &["--out", "models"],
        "which the plan reads",
    );
}

#[test]
fn out_at_an_existing_file_is_refused_as_not_a_folder() {
    let (tmp, dir) = project();
    std::fs::write(dir.join("budget.xlsx"), b"finance's own file").expect("write");
    refused(tmp.path(), &dir, &["--out", "budget.xlsx"], "not a folder");
    // No hidden leftover beside it either.
    assert!(tree(&dir)
        .keys()
        .all(|p| !p.to_string_lossy().contains(".tmp-")));
}

#[test]
fn out_at_a_symbolic_link_is_refused() {
    let (tmp, dir) = project();
    let home = tmp.path().join("home");
    std::fs::create_dir(&home).expect("mkdir");
    #[cfg(unix)]
    {
        std::os::unix::fs::symlink(&home, dir.join("link")).expect("symlink");
        refused(tmp.path(), &dir, &["--out", "link"], "symbolic link");
    }
}

#[test]
fn out_dot_is_refused_with_a_clear_message() {
    let (tmp, dir) = project();
    refused(tmp.path(), &dir, &["--out", "."], "which the plan reads");
    let elsewhere = tmp.path().join("elsewhere");
    std::fs::create_dir(&elsewhere).expect("mkdir");
    let plan = dir.join("plan.toml").display().to_string();
    let before = tree(tmp.path());
    let o = furrow(
        &elsewhere,
        &[&["report", &plan, "--out", "."], &FAST[..]].concat(),
    );
    assert_eq!(o.status.code(), Some(1));
    assert!(
        stderr(&o).contains("it is the current folder"),
        "{}",
        stderr(&o)
    );
    assert!(!stderr(&o).contains("busy"), "{}", stderr(&o));
    assert_eq!(tree(tmp.path()), before);
}

#[test]
fn out_at_an_empty_folder_is_written() {
    let (_tmp, dir) = project();
    std::fs::create_dir(dir.join("empty")).expect("mkdir");
    let o = furrow(
        &dir,
        &[&["report", "plan.toml", "--out", "empty"], &FAST[..]].concat(),
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(dir.join("empty/summary.json").is_file());
    assert!(dir.join("empty/.furrow-report").is_file());
}

#[test]
fn a_report_furrow_wrote_is_replaced_and_a_user_file_added_to_it_stops_the_next_run() {
    let (tmp, dir) = project();
    let run = |seed: &str| {
        furrow(
            &dir,
            &[
                &["report", "plan.toml", "--out", "out", "--seed", seed],
                &FAST[..],
            ]
            .concat(),
        )
    };
    let o = run("1");
    assert!(o.status.success(), "{}", stderr(&o));
    let first = std::fs::read(dir.join("out/summary.json")).expect("read");
    let o = run("2");
    assert!(o.status.success(), "{}", stderr(&o));
    let second = std::fs::read(dir.join("out/summary.json")).expect("read");
    assert_ne!(
        first, second,
        "the second run (another seed) replaced the report"
    );
    // A user's file in the report folder: the next run leaves everything.
    std::fs::write(dir.join("out/my-comments.txt"), b"ask finance").expect("write");
    refused(tmp.path(), &dir, &["--out", "out"], "'my-comments.txt'");
}

#[test]
fn report_files_without_the_marker_are_not_replaced() {
    let (tmp, dir) = project();
    std::fs::create_dir(dir.join("old")).expect("mkdir");
    std::fs::write(dir.join("old/summary.json"), b"{}").expect("write");
    refused(
        tmp.path(),
        &dir,
        &["--out", "old"],
        "no .furrow-report marker",
    );
}

#[test]
fn a_stale_temporary_folder_holding_user_files_is_kept() {
    let (_tmp, dir) = project();
    // Named like a leftover of a dead run, but holding a user's file.
    let stale = dir.join(".out.tmp-999999999");
    std::fs::create_dir(&stale).expect("mkdir");
    std::fs::write(stale.join("precious.txt"), b"keep me").expect("write");
    let o = furrow(
        &dir,
        &[&["report", "plan.toml", "--out", "out"], &FAST[..]].concat(),
    );
    assert!(o.status.success(), "{}", stderr(&o));
    assert_eq!(
        std::fs::read(stale.join("precious.txt")).expect("kept"),
        b"keep me"
    );
}

/// Writes the plan with `name = <toml>` replacing its name line.
fn rename_plan(dir: &Path, toml: &str) {
    let plan = dir.join("plan.toml");
    let text = std::fs::read_to_string(&plan).expect("read");
    let (head, rest) = text.split_once("name = ").expect("a name line");
    let rest = rest.split_once('\n').map(|(_, r)| r).unwrap_or("");
    std::fs::write(&plan, format!("{head}name = {toml}\n{rest}")).expect("write");
}

#[test]
fn plan_name_as_an_absolute_path_is_refused_and_nothing_outside_is_touched() {
    let (tmp, dir) = project();
    let victim = tmp.path().join("victim");
    home_like(&victim);
    rename_plan(&dir, &format!("{:?}", victim.display().to_string()));
    refused(tmp.path(), &dir, &[], "holds a path separator");
}

#[test]
fn plan_name_with_dot_dot_is_refused() {
    let (tmp, dir) = project();
    home_like(&tmp.path().join("x"));
    rename_plan(&dir, "\"../../x\"");
    refused(tmp.path(), &dir, &[], "holds a path separator");
    rename_plan(&dir, "\"..\"");
    refused(tmp.path(), &dir, &[], "not a folder name");
}

#[test]
fn empty_plan_name_does_not_replace_the_reports_folder() {
    let (tmp, dir) = project();
    // Another plan's report in reports/.
    let other = dir.join("reports/other-plan");
    std::fs::create_dir_all(&other).expect("mkdir");
    std::fs::write(other.join("summary.json"), b"{\"plan\": \"other\"}").expect("write");
    rename_plan(&dir, "\"\"");
    refused(tmp.path(), &dir, &[], "the name is empty");
}

#[test]
fn two_runs_creating_a_new_folder_at_once_both_succeed() {
    let (_tmp, dir) = project();
    for round in 0..3 {
        let out = format!("race{round}");
        let spawn = |seed: &str| {
            std::process::Command::new(env!("CARGO_BIN_EXE_furrow"))
                .args(["report", "plan.toml", "--out", &out, "--seed", seed])
                .args(FAST)
                .current_dir(&dir)
                .output()
        };
        let (a, b) = std::thread::scope(|s| {
            let a = s.spawn(|| spawn("1"));
            let b = s.spawn(|| spawn("2"));
            (a.join(), b.join())
        });
        let (a, b) = (
            a.expect("thread").expect("run"),
            b.expect("thread").expect("run"),
        );
        assert!(a.status.success(), "first: {}", stderr(&a));
        assert!(b.status.success(), "second: {}", stderr(&b));
        let files = tree(&dir.join(&out));
        assert!(files.contains_key(Path::new("summary.json")));
        assert!(files.contains_key(Path::new(".furrow-report")));
        let leftovers: Vec<_> = std::fs::read_dir(&dir)
            .expect("read")
            .filter_map(|e| e.ok())
            .map(|e| e.file_name().to_string_lossy().to_string())
            .filter(|n| n.starts_with(&format!(".{out}.")))
            .collect();
        assert!(leftovers.is_empty(), "{leftovers:?}");
    }
}

#[test]
fn init_into_a_folder_with_files_of_the_same_name_is_refused() {
    let tmp = tempfile::tempdir().expect("tmp");
    let dir = tmp.path().join("site");
    std::fs::create_dir(&dir).expect("mkdir");
    std::fs::write(dir.join("keywords.csv"), b"my own keyword list\n").expect("write");
    let before = tree(tmp.path());
    let o = furrow(tmp.path(), &["init", "site"]);
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    assert!(stderr(&o).contains("keywords.csv"), "{}", stderr(&o));
    assert!(stderr(&o).contains("never overwrites"), "{}", stderr(&o));
    assert_eq!(tree(tmp.path()), before);
}

#[test]
fn a_broken_model_file_is_named_once_and_found_by_check() {
    let (_tmp, dir) = project();
    let rank = dir.join("models/rank-gain/default.toml");
    let text = std::fs::read_to_string(&rank).expect("read");
    let broken = text
        .lines()
        .map(|l| {
            if l.starts_with("max_log_gain") {
                "max_log_gain = -3".to_string()
            } else {
                l.to_string()
            }
        })
        .collect::<Vec<_>>()
        .join("\n");
    assert_ne!(broken, text, "the model file changed shape");
    std::fs::write(&rank, broken).expect("write");
    let o = furrow(&dir, &["check", "plan.toml"]);
    assert_eq!(o.status.code(), Some(1), "check must read the model files");
    let err = stderr(&o);
    assert!(err.contains("error: model file "), "{err}");
    assert!(
        err.contains("models/rank-gain/default.toml: `gain.max_log_gain` is -3"),
        "{err}"
    );
    assert!(!err.contains("model file model:"), "{err}");
    assert_eq!(err.matches("rank-gain/default.toml").count(), 1, "{err}");
}

#[test]
fn a_broken_stress_preset_is_found_by_check() {
    let (_tmp, dir) = project();
    let preset = dir.join("models/stress/bad-year.toml");
    let mut text = std::fs::read_to_string(&preset).expect("read");
    text.push_str("\nnot_a_key = 1\n");
    std::fs::write(&preset, text).expect("write");
    let o = furrow(&dir, &["check", "plan.toml"]);
    assert_eq!(o.status.code(), Some(1));
    assert!(stderr(&o).contains("bad-year.toml"), "{}", stderr(&o));
}

#[test]
fn check_flags_a_spike_of_a_trillion_clicks_in_the_history() {
    let (_tmp, dir) = project();
    let o = furrow(&dir, &["check", "plan.toml"]);
    assert!(
        common::stdout(&o).contains("no problems found"),
        "{}",
        common::stdout(&o)
    );
    let hist = dir.join("history.csv");
    let text = std::fs::read_to_string(&hist).expect("read");
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let mut cells: Vec<String> = lines[10].split(',').map(str::to_string).collect();
    let month = cells[0].clone();
    cells[1] = "1000000000000".into();
    lines[10] = cells.join(",");
    std::fs::write(&hist, lines.join("\n") + "\n").expect("write");
    let o = furrow(&dir, &["check", "plan.toml"]);
    let text = common::stdout(&o);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(!text.contains("no problems found"), "{text}");
    assert!(text.contains("1 warning"), "{text}");
    assert!(
        text.contains(&format!(
            "column 'clicks', month {month}: 1,000,000,000,000 is far"
        )),
        "{text}"
    );
}

/// Runs `args` in the project and asserts the run was refused as writing
/// over a file it reads, with nothing under `root` changed.
fn refused_over_an_input(root: &Path, dir: &Path, args: &[&str]) {
    let before = tree(root);
    let o = furrow(dir, args);
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    assert!(
        stderr(&o).contains("which this run reads"),
        "{}",
        stderr(&o)
    );
    assert_eq!(tree(root), before);
}

#[test]
fn dump_scenarios_onto_an_input_file_is_refused() {
    let (tmp, dir) = project();
    let args = ["simulate", "plan.toml", "--scenarios", "100", "--quiet"];
    refused_over_an_input(
        tmp.path(),
        &dir,
        &[&args[..], &["--dump-scenarios", "keywords.csv"]].concat(),
    );
}

#[test]
fn ctr_fit_out_onto_its_query_export_is_refused() {
    let (tmp, dir) = project();
    let args = [
        "ctr",
        "fit",
        "--queries",
        "queries.csv",
        "--out",
        "queries.csv",
    ];
    refused_over_an_input(tmp.path(), &dir, &args);
}
