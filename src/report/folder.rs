//! The report folder: where it may go, and swapping it into place without
//! ever destroying a file furrow did not write.
//!
//! A report is written to a temporary folder beside its place and then put
//! there in one step, so a reader or an interrupt sees the whole old report
//! or the whole new one. Before any work starts, and again at the swap, the
//! destination is checked:
//!
//! - a path that does not exist, or an empty folder, is fine;
//! - a folder furrow wrote itself (it holds the marker file
//!   [`MARKER`] and nothing but report files) is replaced;
//! - anything else is refused with a message that says what to do: a file,
//!   a symbolic link, the current folder or one holding it, a folder that
//!   holds the plan or any of its inputs (always), or a folder with any
//!   other file in it.
//!
//! Old reports are never removed wholesale: their known files are deleted
//! one by one and the folder is removed only once empty, so a file that
//! appears during the run is kept. A new folder is created by a rename
//! that refuses to replace (renameat2 RENAME_NOREPLACE), so two runs
//! creating the same folder at once cannot clobber each other; the loser
//! then replaces the winner's report like any later run.

use crate::error::{Error, Result};
use std::ffi::OsStr;
use std::path::{Path, PathBuf};

/// The marker file every report folder holds, naming what wrote it.
pub const MARKER: &str = ".furrow-report";

/// Files a report folder may hold (besides the marker).
pub const REPORT_FILES: &[&str] = &[
    "index.html",
    "summary.txt",
    "summary.json",
    "allocation.csv",
    "clusters.csv",
    "frontier.csv",
    "stress.csv",
    "forecast.csv",
    "drivers.csv",
    "target.csv",
    "tracking.csv",
    super::workbook::FILE_NAME,
];

/// The marker's text.
pub fn marker_text(plan: &str) -> String {
    format!(
        "This folder is a report written by furrow {} for the plan '{plan}'.\n\
         furrow replaces it on the next run of that report; it replaces only\n\
         folders holding this file and nothing but report files.\n",
        env!("CARGO_PKG_VERSION")
    )
}

/// Why a destination cannot take a report.
fn refuse(dir: &Path, message: impl Into<String>) -> Error {
    Error::Output {
        what: "the report",
        path: dir.to_path_buf(),
        message: message.into(),
    }
}

/// What is at the destination now.
#[derive(Debug, PartialEq)]
pub enum Destination {
    /// Nothing: the folder will be created.
    New,
    /// An empty folder.
    Empty,
    /// A report folder furrow wrote.
    Report,
}

/// Checks that a report may be written to `dir`: see the module comment.
/// `protected` are the plan and its input files, which must never be inside
/// the folder replaced.
pub fn check_destination(dir: &Path, protected: &[PathBuf]) -> Result<Destination> {
    check_protected(dir, protected)?;
    check_not_cwd(dir)?;
    let meta = match std::fs::symlink_metadata(dir) {
        Ok(m) => m,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(Destination::New),
        Err(source) => {
            return Err(Error::Write {
                path: dir.to_path_buf(),
                source,
            })
        }
    };
    if meta.file_type().is_symlink() {
        return Err(refuse(
            dir,
            "it is a symbolic link; give the folder it points to, or a new folder name, with --out",
        ));
    }
    if !meta.is_dir() {
        return Err(refuse(dir, "it is a file, not a folder; give a new folder name (or an empty folder) with --out, and furrow writes the report files into it"));
    }
    classify(dir)
}

/// Refuses the current folder and any folder that holds it: replacing it
/// would leave the shell in a removed folder (and `.` cannot be renamed).
fn check_not_cwd(dir: &Path) -> Result<()> {
    let (Ok(cwd), Ok(abs)) = (std::env::current_dir(), std::fs::canonicalize(dir)) else {
        return Ok(());
    };
    if cwd.starts_with(&abs) {
        let what = if cwd == abs {
            "it is the current folder"
        } else {
            "it holds the current folder"
        };
        return Err(refuse(
            dir,
            format!("{what}; a report is a folder of its own: give a new folder name with --out (for example --out reports/my-plan)"),
        ));
    }
    Ok(())
}

/// Refuses a folder that holds the plan or one of its inputs.
fn check_protected(dir: &Path, protected: &[PathBuf]) -> Result<()> {
    let Ok(abs) = std::fs::canonicalize(dir) else {
        return Ok(());
    };
    for p in protected {
        if let Ok(file) = std::fs::canonicalize(p) {
            if file.starts_with(&abs) {
                return Err(refuse(
                    dir,
                    format!(
                        "it holds {}, which the plan reads; furrow never replaces a folder with the plan or its inputs in it: give a new folder name with --out (for example --out reports/my-plan)",
                        p.display()
                    ),
                ));
            }
        }
    }
    Ok(())
}

/// Empty, a report furrow wrote, or refused with the first foreign entries.
fn classify(dir: &Path) -> Result<Destination> {
    let entries = list(dir)?;
    if entries.is_empty() {
        return Ok(Destination::Empty);
    }
    let foreign: Vec<String> = entries
        .iter()
        .filter(|(name, is_file)| !(*is_file && is_report_file(name)))
        .map(|(name, is_file)| {
            let shown = super::svg::shorten(&name.to_string_lossy(), 60);
            if *is_file {
                format!("'{shown}'")
            } else {
                format!("'{shown}/'")
            }
        })
        .collect();
    let marked = entries.iter().any(|(n, f)| *f && n == MARKER);
    if foreign.is_empty() && marked {
        return Ok(Destination::Report);
    }
    let listed = foreign
        .iter()
        .take(5)
        .cloned()
        .collect::<Vec<_>>()
        .join(", ");
    let more = foreign.len().saturating_sub(5);
    let more = if more > 0 {
        format!(" and {more} more")
    } else {
        String::new()
    };
    let why = if foreign.is_empty() {
        format!("it holds report files but no {MARKER} marker, so furrow did not write it (or an earlier version did)")
    } else {
        format!("it holds files furrow did not write ({listed}{more})")
    };
    Err(refuse(
        dir,
        format!("{why}; furrow replaces only a report folder it wrote itself. Give a new or empty folder with --out, or move those files away"),
    ))
}

/// A report file, the marker, or the temporary name of one of them left
/// by an interrupted write.
fn is_report_file(name: &OsStr) -> bool {
    name == MARKER
        || REPORT_FILES.iter().any(|f| name == *f)
        || name.to_str().is_some_and(is_atomic_leftover)
}

/// Names in `dir` and whether each is a plain file (not a folder or link).
fn list(dir: &Path) -> Result<Vec<(std::ffi::OsString, bool)>> {
    let rerr = |source| Error::Read {
        path: dir.to_path_buf(),
        source,
    };
    let mut out = Vec::new();
    for e in std::fs::read_dir(dir).map_err(rerr)? {
        let e = e.map_err(rerr)?;
        let is_file = e.file_type().map(|t| t.is_file()).unwrap_or(false);
        out.push((e.file_name(), is_file));
    }
    Ok(out)
}

/// Removes a report folder furrow wrote: its known files one by one, then
/// the folder if it is empty. Anything else in it is left, and said.
pub fn remove_report(dir: &Path) -> Result<()> {
    for name in REPORT_FILES.iter().chain(std::iter::once(&MARKER)) {
        match std::fs::remove_file(dir.join(name)) {
            Ok(()) => {}
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => {}
            Err(source) => {
                return Err(Error::Write {
                    path: dir.join(name),
                    source,
                })
            }
        }
    }
    // Temporary files of an interrupted atomic write (".name.tmp-PID").
    for (name, is_file) in list(dir)? {
        if is_file && name.to_str().is_some_and(is_atomic_leftover) {
            let _ = std::fs::remove_file(dir.join(&name));
        }
    }
    std::fs::remove_dir(dir).map_err(|_| {
        refuse(
            dir,
            "files other than the report's appeared in the earlier report folder during the run; they were kept there",
        )
    })
}

/// True for `.<report file>.tmp-<pid>`, the temporary name of an
/// interrupted [`crate::fsio::write_atomic`] of a report file.
fn is_atomic_leftover(name: &str) -> bool {
    REPORT_FILES.iter().chain([&MARKER]).any(|f| {
        name.strip_prefix(&format!(".{f}.tmp-"))
            .is_some_and(|pid| !pid.is_empty() && pid.bytes().all(|b| b.is_ascii_digit()))
    })
}

/// The temporary folder of this run beside `dir`.
pub fn temp_dir(dir: &Path) -> PathBuf {
    dir.with_file_name(format!(".{}.tmp-{}", leaf(dir), std::process::id()))
}

fn leaf(dir: &Path) -> String {
    dir.file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_else(|| "report".into())
}

/// Puts the finished temporary folder `tmp` at `dir`. A new folder is
/// created by a rename that never replaces; an existing one is checked
/// again and exchanged atomically, and the old report (now at `tmp`) is
/// removed file by file.
pub fn swap_in(tmp: &Path, dir: &Path, protected: &[PathBuf]) -> Result<()> {
    let werr = |source| Error::Write {
        path: dir.to_path_buf(),
        source,
    };
    for _ in 0..3 {
        match rename_new(tmp, dir) {
            Ok(()) => return Ok(()),
            Err(e) if is_taken(&e) => {}
            Err(source) => return Err(werr(source)),
        }
        // Another run (or the user) made the folder meanwhile.
        if check_destination(dir, protected)? == Destination::New {
            continue;
        }
        exchange(tmp, dir).map_err(werr)?;
        // `tmp` now holds what was at `dir`: check it again before removing.
        return match classify(tmp) {
            Ok(Destination::Empty) => std::fs::remove_dir(tmp).map_err(werr),
            Ok(_) => remove_report(tmp),
            Err(e) => {
                // Something foreign arrived between the check and the
                // exchange: put it back and refuse.
                exchange(tmp, dir).map_err(werr)?;
                Err(e)
            }
        };
    }
    Err(refuse(
        dir,
        "the folder kept appearing and disappearing while the report was put in place; try again",
    ))
}

fn is_taken(e: &std::io::Error) -> bool {
    e.kind() == std::io::ErrorKind::AlreadyExists
        || e.kind() == std::io::ErrorKind::DirectoryNotEmpty
        || e.raw_os_error() == Some(39) // ENOTEMPTY on Linux
        || e.raw_os_error() == Some(17) // EEXIST
}

/// Renames `a` to `b` only if `b` does not exist.
#[cfg(target_os = "linux")]
fn rename_new(a: &Path, b: &Path) -> std::io::Result<()> {
    use rustix::fs::{renameat_with, RenameFlags, CWD};
    match renameat_with(CWD, a, CWD, b, RenameFlags::NOREPLACE) {
        Ok(()) => Ok(()),
        // File systems without the flag: fall back to a checked rename
        // (a plain rename of a folder never replaces a non-empty one).
        Err(e) if e == rustix::io::Errno::INVAL || e == rustix::io::Errno::NOSYS => {
            rename_checked(a, b)
        }
        Err(e) => Err(e.into()),
    }
}

#[cfg(not(target_os = "linux"))]
fn rename_new(a: &Path, b: &Path) -> std::io::Result<()> {
    rename_checked(a, b)
}

fn rename_checked(a: &Path, b: &Path) -> std::io::Result<()> {
    if std::fs::symlink_metadata(b).is_ok() {
        return Err(std::io::ErrorKind::AlreadyExists.into());
    }
    std::fs::rename(a, b)
}

/// Exchanges two folder names atomically where the system can; elsewhere
/// the old one is moved aside and the new one put in its place (put back
/// if the second step fails).
#[cfg(target_os = "linux")]
fn exchange(a: &Path, b: &Path) -> std::io::Result<()> {
    use rustix::fs::{renameat_with, RenameFlags, CWD};
    match renameat_with(CWD, a, CWD, b, RenameFlags::EXCHANGE) {
        Ok(()) => Ok(()),
        Err(e) if e == rustix::io::Errno::INVAL || e == rustix::io::Errno::NOSYS => {
            exchange_by_renames(a, b)
        }
        Err(e) => Err(e.into()),
    }
}

#[cfg(not(target_os = "linux"))]
fn exchange(a: &Path, b: &Path) -> std::io::Result<()> {
    exchange_by_renames(a, b)
}

fn exchange_by_renames(a: &Path, b: &Path) -> std::io::Result<()> {
    let aside = b.with_file_name(format!(".{}.old-{}", leaf(b), std::process::id()));
    std::fs::rename(b, &aside)?;
    if let Err(e) = std::fs::rename(a, b) {
        let _ = std::fs::rename(&aside, b);
        return Err(e);
    }
    std::fs::rename(&aside, a)
}

/// Removes what interrupted runs left beside the report folder: their
/// temporary folders (`.<name>.tmp-<pid>`, `.<name>.old-<pid>`) whose
/// process no longer runs, and only when they hold nothing but report
/// files. Where it cannot tell whether a process runs (no /proc), it
/// leaves them.
pub fn remove_stale(dir: &Path) {
    let parent = parent(dir);
    let name = leaf(dir);
    let Ok(entries) = std::fs::read_dir(parent) else {
        return;
    };
    let proc_fs = Path::new("/proc/self").exists();
    for e in entries.flatten() {
        let file = e.file_name().to_string_lossy().to_string();
        let pid = [".tmp-", ".old-"].iter().find_map(|tag| {
            file.strip_prefix(&format!(".{name}{tag}"))
                .and_then(|p| p.parse::<u32>().ok())
        });
        let Some(pid) = pid else { continue };
        let gone = proc_fs && !Path::new(&format!("/proc/{pid}")).exists();
        if gone && pid != std::process::id() {
            // A run killed before its marker was in place leaves only the
            // marker's temporary name: still nothing but furrow's files.
            let path = e.path();
            let ours = list(&path).is_ok_and(|entries| {
                entries
                    .iter()
                    .all(|(name, is_file)| *is_file && is_report_file(name))
            });
            if ours {
                let _ = remove_report(&path);
            }
        }
    }
}

/// A write error inside the temporary folder names the file as it will be
/// in the report folder, so a full disk names the folder the user asked
/// for and not the hidden temporary one.
pub fn name_the_folder(e: Error, tmp: &Path, dir: &Path) -> Error {
    match e {
        Error::Write { path, source } => Error::Write {
            path: path
                .strip_prefix(tmp)
                .ok()
                .filter(|rel| !rel.as_os_str().is_empty())
                .map_or_else(|| dir.to_path_buf(), |rel| dir.join(rel)),
            source,
        },
        other => other,
    }
}

/// The folder that holds `dir` ("." for a bare name).
pub fn parent(dir: &Path) -> &Path {
    dir.parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn touch(p: &Path) {
        std::fs::write(p, b"x").expect("write");
    }

    #[test]
    fn a_missing_path_is_new_and_an_empty_folder_is_empty() {
        let t = tempfile::tempdir().expect("tmp");
        assert_eq!(
            check_destination(&t.path().join("no"), &[]).expect("ok"),
            Destination::New
        );
        assert_eq!(
            check_destination(t.path(), &[]).expect("ok"),
            Destination::Empty
        );
    }

    #[test]
    fn a_marked_folder_of_report_files_is_a_report() {
        let t = tempfile::tempdir().expect("tmp");
        touch(&t.path().join(MARKER));
        touch(&t.path().join("summary.json"));
        assert_eq!(
            check_destination(t.path(), &[]).expect("ok"),
            Destination::Report
        );
    }

    #[test]
    fn report_files_without_the_marker_are_refused() {
        let t = tempfile::tempdir().expect("tmp");
        touch(&t.path().join("summary.json"));
        let e = check_destination(t.path(), &[]).expect_err("refused");
        assert!(e.to_string().contains("no .furrow-report marker"), "{e}");
    }

    #[test]
    fn a_marked_folder_with_a_hidden_user_file_is_refused() {
        let t = tempfile::tempdir().expect("tmp");
        touch(&t.path().join(MARKER));
        touch(&t.path().join(".notes"));
        let e = check_destination(t.path(), &[]).expect_err("refused");
        assert!(e.to_string().contains("'.notes'"), "{e}");
    }

    #[test]
    fn a_marked_folder_with_a_subfolder_is_refused() {
        let t = tempfile::tempdir().expect("tmp");
        touch(&t.path().join(MARKER));
        std::fs::create_dir(t.path().join("keep")).expect("mkdir");
        let e = check_destination(t.path(), &[]).expect_err("refused");
        assert!(e.to_string().contains("'keep/'"), "{e}");
    }

    #[test]
    fn a_folder_holding_a_protected_file_is_refused_even_if_marked() {
        let t = tempfile::tempdir().expect("tmp");
        touch(&t.path().join(MARKER));
        let sub = t.path().join("deep");
        std::fs::create_dir(&sub).expect("mkdir");
        touch(&sub.join("plan.toml"));
        let e = check_destination(t.path(), &[sub.join("plan.toml")]).expect_err("refused");
        assert!(e.to_string().contains("which the plan reads"), "{e}");
    }

    #[test]
    fn remove_report_keeps_a_foreign_file() {
        let t = tempfile::tempdir().expect("tmp");
        let d = t.path().join("r");
        std::fs::create_dir(&d).expect("mkdir");
        touch(&d.join(MARKER));
        touch(&d.join("index.html"));
        touch(&d.join("mine.txt"));
        assert!(remove_report(&d).is_err());
        assert!(d.join("mine.txt").exists());
        assert!(!d.join("index.html").exists());
    }

    #[test]
    fn swap_in_creates_then_replaces_a_report() {
        let t = tempfile::tempdir().expect("tmp");
        let dir = t.path().join("out");
        for round in 0..2 {
            let tmp = t.path().join(format!(".out.tmp-{round}"));
            std::fs::create_dir(&tmp).expect("mkdir");
            touch(&tmp.join(MARKER));
            std::fs::write(tmp.join("summary.txt"), format!("{round}")).expect("write");
            swap_in(&tmp, &dir, &[]).expect("swapped");
            assert!(!tmp.exists());
            assert_eq!(
                std::fs::read_to_string(dir.join("summary.txt")).expect("read"),
                format!("{round}")
            );
        }
    }

    #[test]
    fn a_full_disk_names_the_output_folder_not_the_temporary_one() {
        let dir = Path::new("reports/plan");
        let tmp = temp_dir(dir);
        let full = || std::io::Error::from_raw_os_error(28); // ENOSPC
        let e = Error::Write {
            path: tmp.join("index.html"),
            source: full(),
        };
        let text = name_the_folder(e, &tmp, dir).to_string();
        assert!(
            text.starts_with("cannot write reports/plan/index.html: "),
            "{text}"
        );
        assert!(!text.contains(".tmp-"), "{text}");
        let e = Error::Write {
            path: tmp.clone(),
            source: full(),
        };
        assert!(name_the_folder(e, &tmp, dir)
            .to_string()
            .starts_with("cannot write reports/plan: "));
    }

    #[test]
    fn stale_folders_of_dead_runs_are_removed_only_when_all_theirs() {
        let t = tempfile::tempdir().expect("tmp");
        let dir = t.path().join("out");
        // pid 999999999 runs nowhere.
        let cases: [(&str, &[&str], bool); 4] = [
            (
                ".out.tmp-999999999",
                &["..furrow-report.tmp-999999999"],
                true,
            ),
            (".out.old-999999998", &[MARKER, "index.html"], true),
            (".out.tmp-999999997", &[], true),
            (".out.tmp-999999996", &[MARKER, "mine.txt"], false),
        ];
        for (name, files, _) in &cases {
            std::fs::create_dir(t.path().join(name)).expect("mkdir");
            for f in files.iter() {
                touch(&t.path().join(name).join(f));
            }
        }
        remove_stale(&dir);
        for (name, _, removed) in &cases {
            assert_eq!(!t.path().join(name).exists(), *removed, "{name}");
        }
    }

    #[test]
    fn atomic_leftovers_are_recognised_only_for_report_files() {
        assert!(is_atomic_leftover(".summary.json.tmp-123"));
        assert!(!is_atomic_leftover(".notes.tmp-123"));
        assert!(!is_atomic_leftover(".summary.json.tmp-"));
        assert!(!is_atomic_leftover(".summary.json.tmp-12a"));
        assert!(is_atomic_leftover("..furrow-report.tmp-7"));
    }
}
