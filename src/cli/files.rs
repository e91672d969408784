//! Writing files safely: every file goes through a temporary file created exclusively
//! (never following a link, under a name no one can predict, in the target folder) and
//! is renamed into place; nothing is written through a link; a report folder keeps a
//! manifest of the files its reports wrote, and `--force` replaces only those.

use super::output::{Failure, UsageError};
use relyard::Error;
use std::collections::BTreeSet;
use std::hash::{BuildHasher, Hasher};
use std::io::{self, Write};
use std::path::{Path, PathBuf};

/// Temporary files start with this and end with [`TEMP_SUFFIX`]; between them the
/// process id and a random part: `.relyard-<pid>-<random>.tmp`.
const TEMP_PREFIX: &str = ".relyard-";
/// See [`TEMP_PREFIX`].
const TEMP_SUFFIX: &str = ".tmp";
/// The report folder's list of the files relyard reports wrote there.
pub const MANIFEST: &str = ".relyard-manifest.json";

fn usage(message: String) -> Failure {
    Failure::Usage(UsageError(message))
}

fn io_failure(what: String, e: io::Error) -> Failure {
    Failure::Lib(Error::io(what, e))
}

/// A random 64-bit value from the standard library's randomly keyed hasher.
fn random_u64() -> u64 {
    let mut h = std::collections::hash_map::RandomState::new().build_hasher();
    let nanos = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_nanos())
        .unwrap_or(0);
    h.write_u128(nanos);
    h.write_u32(std::process::id());
    h.finish()
}

/// Create `path` for writing only if nothing is there: no file, and no link (not even
/// a dangling one), is ever opened or followed.
fn create_exclusive(path: &Path) -> io::Result<std::fs::File> {
    // O_CREAT | O_EXCL: fails when anything, a link included, has the name.
    std::fs::OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(path)
}

/// Write `contents` to a new temporary file in `dir`; returns its path.
fn write_temp(dir: &Path, contents: &[u8]) -> io::Result<PathBuf> {
    for _ in 0..16 {
        let name = format!(
            "{TEMP_PREFIX}{}-{:016x}{TEMP_SUFFIX}",
            std::process::id(),
            random_u64()
        );
        let path = dir.join(name);
        match create_exclusive(&path) {
            Ok(mut f) => {
                let written = f.write_all(contents).and_then(|_| f.sync_all());
                return match written {
                    Ok(()) => Ok(path),
                    Err(e) => {
                        let _ = std::fs::remove_file(&path);
                        Err(e)
                    }
                };
            }
            Err(e) if e.kind() == io::ErrorKind::AlreadyExists => continue,
            Err(e) => return Err(e),
        }
    }
    Err(io::Error::new(
        io::ErrorKind::AlreadyExists,
        "no unused temporary file name was found",
    ))
}

/// Whether `path` is a symbolic link (dangling or not).
fn is_link(path: &Path) -> bool {
    std::fs::symlink_metadata(path).is_ok_and(|m| m.file_type().is_symlink())
}

/// Refuse to write at `path` when it is a link.
pub fn refuse_link(path: &Path) -> Result<(), Failure> {
    if is_link(path) {
        return Err(usage(format!(
            "{} is a symbolic link; relyard never writes through a link (remove the link or \
             choose another place)",
            path.display()
        )));
    }
    Ok(())
}

/// The folder a file goes into ("." for a bare name).
fn folder_of(path: &Path) -> &Path {
    path.parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or_else(|| Path::new("."))
}

/// Write one new file safely; an existing file is replaced only with `force`, and never
/// when the path is a link.
pub fn write_new_file(path: &Path, contents: &[u8], force: bool) -> Result<(), Failure> {
    refuse_link(path)?;
    if path.exists() && !force {
        return Err(usage(format!(
            "{} already exists; choose another name or pass --force to replace it",
            path.display()
        )));
    }
    let mut staged = Staged::default();
    staged.add(path, contents)?;
    staged.commit()
}

/// Temporary files written and waiting to be renamed into place; dropped without
/// [`Staged::commit`], they are removed.
#[derive(Default)]
pub struct Staged {
    files: Vec<(PathBuf, PathBuf)>,
}

impl Staged {
    /// Write `contents` to a temporary file beside `target`.
    pub fn add(&mut self, target: &Path, contents: &[u8]) -> Result<(), Failure> {
        let tmp = write_temp(folder_of(target), contents)
            .map_err(|e| io_failure(format!("writing {}", target.display()), e))?;
        self.files.push((tmp, target.to_path_buf()));
        Ok(())
    }

    /// Rename every temporary file into place, in the order added.
    pub fn commit(mut self) -> Result<(), Failure> {
        let files = std::mem::take(&mut self.files);
        let mut pending = files.into_iter();
        while let Some((tmp, target)) = pending.next() {
            if let Err(e) = std::fs::rename(&tmp, &target) {
                let _ = std::fs::remove_file(&tmp);
                for (rest, _) in pending {
                    let _ = std::fs::remove_file(rest);
                }
                return Err(io_failure(format!("writing {}", target.display()), e));
            }
        }
        Ok(())
    }
}

impl Drop for Staged {
    fn drop(&mut self) {
        for (tmp, _) in &self.files {
            let _ = std::fs::remove_file(tmp);
        }
    }
}

/// The process id in one of our temporary file names.
fn temp_pid(name: &str) -> Option<u32> {
    let rest = name.strip_prefix(TEMP_PREFIX)?.strip_suffix(TEMP_SUFFIX)?;
    let (pid, random) = rest.split_once('-')?;
    (random.len() == 16 && random.chars().all(|c| c.is_ascii_hexdigit()))
        .then(|| pid.parse().ok())
        .flatten()
}

/// Whether a process is running (known only where /proc exists; elsewhere a temporary
/// file counts as stale once it is an hour old).
fn running(pid: u32, age: Option<std::time::Duration>) -> bool {
    if pid == std::process::id() {
        return true;
    }
    if Path::new("/proc/self").exists() {
        return Path::new(&format!("/proc/{pid}")).exists();
    }
    age.is_none_or(|a| a < std::time::Duration::from_secs(3600))
}

/// Remove our own temporary files that a killed run left in `dir` (regular files only,
/// never links, and never those of a run still going).
pub fn clean_stale_temps(dir: &Path) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    for e in entries.flatten() {
        let name = e.file_name().to_string_lossy().into_owned();
        let Some(pid) = temp_pid(&name) else {
            continue;
        };
        let Ok(meta) = std::fs::symlink_metadata(e.path()) else {
            continue;
        };
        let age = meta.modified().ok().and_then(|m| m.elapsed().ok());
        if meta.is_file() && !running(pid, age) {
            let _ = std::fs::remove_file(e.path());
        }
    }
}

/// The files an earlier report wrote in a folder (paths relative to it), from its
/// manifest; empty when there is none or it cannot be read.
pub fn read_manifest(out: &Path) -> BTreeSet<String> {
    let Ok(text) = std::fs::read_to_string(out.join(MANIFEST)) else {
        return BTreeSet::new();
    };
    serde_json::from_str::<serde_json::Value>(&text)
        .ok()
        .and_then(|v| v.get("files").cloned())
        .and_then(|f| serde_json::from_value::<Vec<String>>(f).ok())
        .map(|files| files.into_iter().filter(|f| safe_relative(f)).collect())
        .unwrap_or_default()
}

/// A manifest entry names a file inside the folder: relative, no `..`, no root.
fn safe_relative(f: &str) -> bool {
    let p = Path::new(f);
    !f.is_empty()
        && p.components()
            .all(|c| matches!(c, std::path::Component::Normal(_)))
}

/// The manifest's text for these files.
pub fn manifest_text(files: &BTreeSet<String>) -> String {
    let doc = serde_json::json!({
        "written_by": format!("relyard {}", env!("CARGO_PKG_VERSION")),
        "about": "the files relyard reports wrote in this folder; relyard report --force \
                  replaces or removes only these",
        "files": files,
    });
    let mut s = serde_json::to_string_pretty(&doc).unwrap_or_default();
    s.push('\n');
    s
}

/// Write a report's files (paths relative to `out`, e.g. "figures/forest.svg") into `out`.
///
/// Nothing is written through a link. An existing file is replaced only with `force`,
/// and only when the folder's manifest lists it as written by an earlier report; files
/// the manifest lists that this report no longer has are removed with `force`; nothing
/// else in the folder is touched. Every file is written to a temporary file first; the
/// manifest (listing old and new files) is written before the renames, so that a run
/// killed half-way leaves a folder the next run with `--force` can replace.
pub fn write_report(out: &Path, files: &[(String, Vec<u8>)], force: bool) -> Result<(), Failure> {
    let mut folders: Vec<PathBuf> = vec![out.to_path_buf()];
    for (rel, _) in files {
        if let Some(parent) = Path::new(rel)
            .parent()
            .filter(|p| !p.as_os_str().is_empty())
        {
            let f = out.join(parent);
            if !folders.contains(&f) {
                folders.push(f);
            }
        }
    }
    for f in &folders[1..] {
        refuse_link(f)?;
    }
    for f in &folders {
        std::fs::create_dir_all(f)
            .map_err(|e| io_failure(format!("creating {}", f.display()), e))?;
        clean_stale_temps(f);
    }
    refuse_link(&out.join(MANIFEST))?;
    let earlier = read_manifest(out);
    check_targets(out, files.iter().map(|(r, _)| r.as_str()), &earlier, force)?;
    let ours: BTreeSet<String> = files.iter().map(|(r, _)| r.clone()).collect();
    let stale: Vec<&String> = if force {
        earlier.iter().filter(|f| !ours.contains(*f)).collect()
    } else {
        Vec::new()
    };
    let mut staged = Staged::default();
    for (rel, bytes) in files {
        staged.add(&out.join(rel), bytes)?;
    }
    // The manifest first, naming every file this run may leave behind.
    let during: BTreeSet<String> = ours.iter().chain(earlier.iter()).cloned().collect();
    write_new_file(&out.join(MANIFEST), manifest_text(&during).as_bytes(), true)?;
    staged.commit()?;
    for f in stale {
        let p = out.join(f);
        if std::fs::symlink_metadata(&p).is_ok_and(|m| m.is_file()) {
            let _ = std::fs::remove_file(&p);
        }
    }
    write_new_file(&out.join(MANIFEST), manifest_text(&ours).as_bytes(), true)
}

/// Every target may be written: none is a link; an existing one only with `force` and
/// only when an earlier report wrote it.
pub fn check_targets<'a>(
    out: &Path,
    files: impl IntoIterator<Item = &'a str>,
    earlier: &BTreeSet<String>,
    force: bool,
) -> Result<(), Failure> {
    for rel in files {
        let target = out.join(rel);
        refuse_link(&target)?;
        if std::fs::symlink_metadata(&target).is_err() {
            continue;
        }
        let from_earlier = earlier.contains(rel);
        if !force {
            let whose = if from_earlier {
                " (written by an earlier report)"
            } else {
                ""
            };
            return Err(usage(format!(
                "{}{whose} already exists; choose another --out folder or pass --force to \
                 replace the report",
                target.display()
            )));
        }
        if !from_earlier {
            return Err(usage(format!(
                "{} already exists and was not written by a relyard report (the folder's {MANIFEST} \
                 does not list it), so it is not replaced even with --force: move it or choose \
                 another --out folder",
                target.display()
            )));
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn scratch(name: &str) -> PathBuf {
        let d = std::env::temp_dir().join(format!("relyard-files-{name}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&d);
        std::fs::create_dir_all(&d).unwrap();
        d
    }

    #[cfg(unix)]
    #[test]
    fn a_planted_link_is_never_followed() {
        let d = scratch("link");
        let victim = d.join("victim.txt");
        std::fs::write(&victim, "keep me").unwrap();
        let planted = d.join("planted");
        std::os::unix::fs::symlink(&victim, &planted).unwrap();
        // Exclusive creation refuses the link, even one that points to a file.
        assert!(create_exclusive(&planted).is_err());
        // And writing a file at a link's name is refused, with or without force.
        assert!(write_new_file(&planted, b"x", true).is_err());
        assert_eq!(std::fs::read_to_string(&victim).unwrap(), "keep me");
        // A dangling link is refused too.
        let dangling = d.join("dangling");
        std::os::unix::fs::symlink(d.join("nowhere"), &dangling).unwrap();
        assert!(create_exclusive(&dangling).is_err());
        assert!(!d.join("nowhere").exists());
    }

    #[test]
    fn temporary_names_are_unpredictable_and_cleaned() {
        let d = scratch("temps");
        let a = write_temp(&d, b"a").unwrap();
        let b = write_temp(&d, b"b").unwrap();
        assert_ne!(a, b);
        let own = a.file_name().unwrap().to_string_lossy().into_owned();
        assert_eq!(temp_pid(&own), Some(std::process::id()));
        // A run that is not going any more (pid 0 is never a user process here).
        let stale = d.join(format!("{TEMP_PREFIX}0-{:016x}{TEMP_SUFFIX}", 7u64));
        std::fs::write(&stale, "left by a killed run").unwrap();
        let other = d.join(".relyard-notours.tmp");
        std::fs::write(&other, "not ours").unwrap();
        clean_stale_temps(&d);
        assert!(!stale.exists());
        assert!(a.exists() && b.exists(), "this run's own files stay");
        assert!(other.exists(), "a name not of our pattern stays");
    }

    #[test]
    fn staged_files_appear_only_on_commit() {
        let d = scratch("staged");
        let target = d.join("out.txt");
        {
            let mut s = Staged::default();
            s.add(&target, b"first").unwrap();
            assert!(!target.exists());
        }
        // Dropped without commit: nothing left behind.
        assert_eq!(std::fs::read_dir(&d).unwrap().count(), 0);
        let mut s = Staged::default();
        s.add(&target, b"second").unwrap();
        s.commit().unwrap();
        assert_eq!(std::fs::read_to_string(&target).unwrap(), "second");
        assert_eq!(std::fs::read_dir(&d).unwrap().count(), 1);
    }

    #[test]
    fn manifest_entries_stay_inside_the_folder() {
        let d = scratch("manifest");
        let files: BTreeSet<String> = ["report.html", "figures/forest.svg"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        std::fs::write(d.join(MANIFEST), manifest_text(&files)).unwrap();
        assert_eq!(read_manifest(&d), files);
        std::fs::write(
            d.join(MANIFEST),
            r#"{"files": ["../outside.txt", "/etc/passwd", "ok.md"]}"#,
        )
        .unwrap();
        assert_eq!(read_manifest(&d).into_iter().collect::<Vec<_>>(), ["ok.md"]);
    }
}
