//! The output folder as one unit: a lock so that two runs never mix their files, and a commit
//! that replaces the whole set of a run's files or none of them, even when the run is killed
//! half-way.
//!
//! A run [`OutputDir::open`]s its folder before it evaluates anything: the folder is created
//! and locked (`.heft-lock`, an advisory lock the system drops when the process ends, however
//! it ends), and whatever a dead run left is cleared: a commit it had begun is rolled back from
//! its journal, and its temporary files are removed. Each file is then written in full to a
//! temporary file beside its target ([`Transaction::stage`]; beside it, so that the rename is
//! within one file system even when a subfolder is a link to another disk). [`Transaction::commit`]
//! checks every target first (a folder in the way stops it before anything changes), writes a
//! journal, moves each old file aside, renames each new one into place, and only then removes
//! the journal: that removal is the commit point. A failure before it puts every old file back
//! and removes every new one; a process killed before it is rolled back by the next run.

use std::fs::{File, OpenOptions};
use std::io::{Read, Seek, Write};
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use crate::output::WriteError;

/// The lock file in an output folder.
pub const LOCK_FILE: &str = ".heft-lock";
/// The journal of a commit under way.
pub const JOURNAL_FILE: &str = ".heft-commit";
/// The prefix of every temporary file heft makes in an output folder.
const PREFIX: &str = ".heft-";

fn werr(path: &Path, e: impl std::fmt::Display) -> WriteError {
    WriteError {
        path: path.to_path_buf(),
        reason: e.to_string(),
    }
}

/// A locked output folder.
#[derive(Debug)]
pub struct OutputDir {
    dir: PathBuf,
    /// Held open for the lock.
    _lock: File,
    /// What the opening cleared from a dead run, for the log.
    cleared: Vec<String>,
}

/// One step of a commit, as the journal records it: paths relative to the output folder.
#[derive(Debug, Clone, Serialize, Deserialize)]
struct Entry {
    /// The file being replaced or created.
    target: String,
    /// Where the old file was moved, if there was one.
    backup: Option<String>,
    /// The new file before its rename.
    staged: String,
}

impl OutputDir {
    /// Creates (if missing) and locks `dir`, rolls back a commit a dead run left half-done and
    /// removes its temporary files, and checks that files can be made there. Refuses, naming
    /// the other process, when another run holds the folder.
    pub fn open(dir: &Path) -> Result<OutputDir, WriteError> {
        std::fs::create_dir_all(dir).map_err(|e| werr(dir, format!("cannot create the output folder: {e}")))?;
        // Absolute, so that every path of a commit compares the same way (temporary files
        // come back absolute).
        let dir = &std::path::absolute(dir).map_err(|e| werr(dir, e))?;
        if !dir.is_dir() {
            return Err(werr(dir, "the output path is not a folder"));
        }
        let lock_path = dir.join(LOCK_FILE);
        let mut lock = OpenOptions::new()
            .read(true)
            .write(true)
            .create(true)
            .truncate(false)
            .open(&lock_path)
            .map_err(|e| werr(dir, format!("cannot write into the output folder: {e}")))?;
        match lock.try_lock() {
            Ok(()) => {}
            Err(std::fs::TryLockError::WouldBlock) => {
                let mut holder = String::new();
                let _ = lock.read_to_string(&mut holder);
                let who = match holder.trim() {
                    "" => "another heft run".to_owned(),
                    pid => format!("another heft run (process {pid})"),
                };
                return Err(werr(
                    dir,
                    format!("{who} is writing into this folder: wait for it to finish, or give another --out"),
                ));
            }
            Err(std::fs::TryLockError::Error(e)) => {
                return Err(werr(dir, format!("cannot lock the output folder: {e}")));
            }
        }
        lock.set_len(0).map_err(|e| werr(&lock_path, e))?;
        lock.rewind().map_err(|e| werr(&lock_path, e))?;
        write!(lock, "{}", std::process::id()).map_err(|e| werr(&lock_path, e))?;
        let mut out = OutputDir {
            dir: dir.to_path_buf(),
            _lock: lock,
            cleared: Vec::new(),
        };
        out.recover()?;
        // Can files be made here? (A read-only folder is found now, not after the evaluation.)
        tempfile::Builder::new()
            .prefix(PREFIX)
            .suffix(".partial")
            .tempfile_in(dir)
            .map_err(|e| werr(dir, format!("cannot write into the output folder: {e}")))?;
        Ok(out)
    }

    /// The folder.
    pub fn path(&self) -> &Path {
        &self.dir
    }

    /// What opening the folder cleared from a dead run (rolled-back commits, temporary files).
    pub fn cleared(&self) -> &[String] {
        &self.cleared
    }

    /// A new transaction: files staged in this folder, then committed together.
    pub fn transaction(&self) -> Transaction<'_> {
        Transaction {
            out: self,
            staged: Vec::new(),
            #[cfg(test)]
            fail_at: None,
        }
    }

    /// Rolls back a commit a dead run left (its journal), then removes heft's temporary files
    /// from the folder and its immediate subfolders.
    fn recover(&mut self) -> Result<(), WriteError> {
        let journal = self.dir.join(JOURNAL_FILE);
        if journal.exists() {
            let text = std::fs::read_to_string(&journal).map_err(|e| werr(&journal, e))?;
            let entries: Vec<Entry> = serde_json::from_str(&text).map_err(|e| {
                werr(
                    &journal,
                    format!(
                        "the journal of an interrupted commit cannot be read ({e}); look at the folder and remove it"
                    ),
                )
            })?;
            rollback(&self.dir, &entries)
                .map_err(|e| werr(&journal, format!("rolling back an interrupted commit: {e}")))?;
            std::fs::remove_file(&journal).map_err(|e| werr(&journal, e))?;
            self.cleared.push(format!(
                "rolled back a commit of {} files a stopped run had begun",
                entries.len()
            ));
        }
        let mut removed = 0;
        let mut folders = vec![self.dir.clone()];
        if let Ok(read) = std::fs::read_dir(&self.dir) {
            folders.extend(read.flatten().map(|e| e.path()).filter(|p| p.is_dir()));
        }
        for folder in folders {
            let Ok(read) = std::fs::read_dir(&folder) else { continue };
            for e in read.flatten() {
                let name = e.file_name();
                let name = name.to_string_lossy();
                if is_temporary(&name) && e.path().is_file() && std::fs::remove_file(e.path()).is_ok() {
                    removed += 1;
                }
            }
        }
        if removed > 0 {
            self.cleared
                .push(format!("removed {removed} temporary files a stopped run left"));
        }
        Ok(())
    }
}

/// True for the names of heft's temporary files (not the lock or the journal).
fn is_temporary(name: &str) -> bool {
    name.starts_with(PREFIX) && (name.contains(".partial") || name.ends_with(".old"))
}

/// Undoes the steps of a commit: every new file that reached its target is removed, every old
/// file goes back, every staged file that did not move is removed. Each step is checked
/// against what is on disk, so it is safe at any point of an interrupted commit.
fn rollback(dir: &Path, entries: &[Entry]) -> std::io::Result<()> {
    for e in entries.iter().rev() {
        let target = dir.join(&e.target);
        let staged = dir.join(&e.staged);
        let placed = !staged.exists();
        match &e.backup {
            Some(b) => {
                let backup = dir.join(b);
                if backup.exists() {
                    // The old file is still aside: it goes back over whatever is there.
                    std::fs::rename(&backup, &target)?;
                }
            }
            None => {
                if placed && target.is_file() {
                    std::fs::remove_file(&target)?;
                }
            }
        }
        if staged.exists() {
            std::fs::remove_file(&staged)?;
        }
    }
    Ok(())
}

/// The buffer between a writer and its staged file: large enough that a writer's many small
/// writes reach the system as few large ones.
const STAGE_BUFFER: usize = 1 << 20;

/// A file being written beside its target (see [`Transaction::create`]): a buffered
/// [`Write`] to its temporary file.
#[derive(Debug)]
pub struct StagedFile {
    file: std::io::BufWriter<tempfile::NamedTempFile>,
    target: PathBuf,
}

impl StagedFile {
    /// The file this one will replace.
    pub fn target(&self) -> &Path {
        &self.target
    }

    /// Sets the file's length (a longer file reads as zeros where nothing was written).
    pub fn set_len(&mut self, len: u64) -> std::io::Result<()> {
        self.file.flush()?;
        self.file.get_ref().as_file().set_len(len)
    }

    /// Writes `bytes` at byte `at` of the file (after what was written through the buffer),
    /// for a writer that fills a file laid out before its data is known.
    pub fn write_at(&mut self, at: u64, bytes: &[u8]) -> std::io::Result<()> {
        if !self.file.buffer().is_empty() {
            self.file.flush()?;
        }
        #[cfg(unix)]
        {
            use std::os::unix::fs::FileExt;
            self.file.get_ref().as_file().write_all_at(bytes, at)
        }
        #[cfg(not(unix))]
        {
            use std::io::{Seek, SeekFrom};
            let f = self.file.get_mut().as_file_mut();
            f.seek(SeekFrom::Start(at))?;
            f.write_all(bytes)
        }
    }

    /// Reads up to `buf.len()` bytes from byte `at` of the file (what was written and flushed);
    /// returns how many were read (0 at the end).
    pub fn read_at(&mut self, at: u64, buf: &mut [u8]) -> std::io::Result<usize> {
        use std::io::{Read, Seek, SeekFrom};
        self.file.flush()?;
        let f = self.file.get_mut().as_file_mut();
        f.seek(SeekFrom::Start(at))?;
        f.read(buf)
    }
}

impl Write for StagedFile {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        self.file.write(buf)
    }
    fn write_all(&mut self, buf: &[u8]) -> std::io::Result<()> {
        self.file.write_all(buf)
    }
    fn flush(&mut self) -> std::io::Result<()> {
        self.file.flush()
    }
}

/// A set of files written in full, waiting to be committed together.
#[derive(Debug)]
pub struct Transaction<'a> {
    out: &'a OutputDir,
    staged: Vec<(tempfile::TempPath, PathBuf)>,
    /// Tests only: the rename of this entry fails, as a full disk or a vanished folder would.
    #[cfg(test)]
    fail_at: Option<usize>,
}

impl Transaction<'_> {
    /// A temporary file beside `target` (its folder created if missing), for a writer that
    /// needs a path (the plot library); `ext` is kept as its extension. Committed with the rest.
    pub fn stage_path(&mut self, target: &Path, ext: &str) -> Result<PathBuf, WriteError> {
        let parent = self.parent_of(target)?;
        let tmp = tempfile::Builder::new()
            .prefix(PREFIX)
            .suffix(&format!(".partial.{ext}"))
            .tempfile_in(&parent)
            .map_err(|e| werr(&parent, format!("cannot create a file in the output folder: {e}")))?;
        let path = tmp.into_temp_path();
        let p = path.to_path_buf();
        self.staged.push((path, target.to_path_buf()));
        Ok(p)
    }

    /// Writes a file given as consecutive parts in full to a temporary file beside `target`.
    pub fn stage(&mut self, target: &Path, parts: &[&[u8]]) -> Result<(), WriteError> {
        let mut file = self.create(target)?;
        for bytes in parts {
            file.write_all(bytes).map_err(|e| werr(target, e))?;
        }
        self.add(file)
    }

    /// A temporary file beside `target` (its folder created if missing) to write into through
    /// a buffer, in as many calls as the writer likes (a writer that streams its rows, or,
    /// later, a window of frames at a time); [`Transaction::add`] then joins it to the files
    /// committed together. A file never added is removed when dropped.
    pub fn create(&self, target: &Path) -> Result<StagedFile, WriteError> {
        let parent = self.parent_of(target)?;
        let tmp = tempfile::Builder::new()
            .prefix(PREFIX)
            .suffix(".partial")
            .tempfile_in(&parent)
            .map_err(|e| werr(&parent, format!("cannot create a file in the output folder: {e}")))?;
        Ok(StagedFile {
            file: std::io::BufWriter::with_capacity(STAGE_BUFFER, tmp),
            target: target.to_path_buf(),
        })
    }

    /// Flushes and syncs a file made by [`Transaction::create`] and stages it for the commit.
    pub fn add(&mut self, file: StagedFile) -> Result<(), WriteError> {
        let target = file.target;
        let tmp = file.file.into_inner().map_err(|e| werr(&target, e.error()))?;
        tmp.as_file().sync_all().map_err(|e| werr(&target, e))?;
        self.staged.push((tmp.into_temp_path(), target));
        Ok(())
    }

    /// The folder `target` goes in, created if missing; `target` must lie in the output folder.
    fn parent_of(&self, target: &Path) -> Result<PathBuf, WriteError> {
        if target.strip_prefix(&self.out.dir).is_err() {
            return Err(werr(target, "an output must lie inside the output folder"));
        }
        let parent = target.parent().unwrap_or(&self.out.dir).to_path_buf();
        std::fs::create_dir_all(&parent).map_err(|e| werr(&parent, format!("cannot create the folder: {e}")))?;
        Ok(parent)
    }

    /// Replaces every target by its staged file, or, on any failure, changes none of them
    /// (see the module notes). Returns the paths written.
    pub fn commit(self) -> Result<Vec<PathBuf>, WriteError> {
        let dir = &self.out.dir;
        let rel = |p: &Path| -> Result<String, WriteError> {
            p.strip_prefix(dir)
                .ok()
                .and_then(|r| r.to_str())
                .map(str::to_owned)
                .ok_or_else(|| werr(p, "an output's name must be UTF-8 text inside the output folder"))
        };
        // Every target checked before anything changes.
        for (i, (_, target)) in self.staged.iter().enumerate() {
            if target.is_dir() {
                return Err(werr(
                    target,
                    "a folder has this output's name: move it or rename the output",
                ));
            }
            if self.staged[..i].iter().any(|(_, t)| t == target) {
                return Err(werr(target, "two outputs of the run have this name"));
            }
        }
        let mut entries = Vec::with_capacity(self.staged.len());
        for (tmp, target) in &self.staged {
            let backup = if std::fs::symlink_metadata(target).is_ok() {
                let parent = target.parent().unwrap_or(dir);
                let b = tempfile::Builder::new()
                    .prefix(PREFIX)
                    .suffix(".old")
                    .tempfile_in(parent)
                    .map_err(|e| werr(parent, format!("cannot create a file in the output folder: {e}")))?
                    .into_temp_path()
                    .keep()
                    .map_err(|e| werr(parent, e))?;
                // Only the name is wanted (free, and unique under the lock): the file must not
                // exist until the old one is moved there, or a rollback would take it for that.
                std::fs::remove_file(&b).map_err(|e| werr(&b, e))?;
                Some(rel(&b)?)
            } else {
                None
            };
            entries.push(Entry {
                target: rel(target)?,
                backup,
                staged: rel(tmp)?,
            });
        }
        let journal = dir.join(JOURNAL_FILE);
        let text = serde_json::to_vec(&entries).map_err(|e| werr(&journal, e))?;
        write_synced(&journal, &text)?;
        let result = self.apply(&entries);
        match result {
            Ok(()) => {
                // The commit point: the journal goes, and with it any way back.
                std::fs::remove_file(&journal).map_err(|e| werr(&journal, e))?;
                for e in &entries {
                    if let Some(b) = &e.backup {
                        let _ = std::fs::remove_file(dir.join(b));
                    }
                }
                let written = self.staged.into_iter().map(|(tmp, target)| {
                    // Already renamed: forget the temporary path without deleting anything.
                    let _ = tmp.keep();
                    target
                });
                Ok(written.collect())
            }
            Err(e) => {
                let undo = rollback(dir, &entries);
                for e in &entries {
                    if let Some(b) = &e.backup {
                        let _ = std::fs::remove_file(dir.join(b));
                    }
                }
                match undo {
                    Ok(()) => {
                        let _ = std::fs::remove_file(&journal);
                        Err(e)
                    }
                    Err(u) => Err(werr(
                        &e.path,
                        format!(
                            "{}; and putting the old files back failed too ({u}): the journal {} says what to do",
                            e.reason,
                            journal.display()
                        ),
                    )),
                }
            }
        }
    }

    /// Moves the old files aside, then the new ones into place.
    fn apply(&self, entries: &[Entry]) -> Result<(), WriteError> {
        let dir = &self.out.dir;
        for e in entries {
            if let Some(b) = &e.backup {
                let target = dir.join(&e.target);
                std::fs::rename(&target, dir.join(b)).map_err(|err| werr(&target, err))?;
            }
        }
        for (k, (e, (tmp, target))) in entries.iter().zip(&self.staged).enumerate() {
            self.injected_failure(k, target)?;
            #[cfg(unix)]
            {
                use std::os::unix::fs::PermissionsExt;
                // Temporary files are private (0600); outputs get the usual permissions.
                std::fs::set_permissions(tmp, std::fs::Permissions::from_mode(0o644))
                    .map_err(|err| werr(target, err))?;
            }
            std::fs::rename(dir.join(&e.staged), target).map_err(|err| werr(target, err))?;
        }
        Ok(())
    }
}

impl Transaction<'_> {
    /// Tests only: fails the rename of entry `k` when the test asked for it.
    #[cfg(test)]
    fn injected_failure(&self, k: usize, target: &Path) -> Result<(), WriteError> {
        match self.fail_at == Some(k) {
            true => Err(werr(target, "a failure made by the test")),
            false => Ok(()),
        }
    }

    #[cfg(not(test))]
    #[inline(always)]
    fn injected_failure(&self, _k: usize, _target: &Path) -> Result<(), WriteError> {
        Ok(())
    }
}

/// Writes `bytes` to `path` and syncs it.
fn write_synced(path: &Path, bytes: &[u8]) -> Result<(), WriteError> {
    let mut f = File::create(path).map_err(|e| werr(path, e))?;
    f.write_all(bytes).map_err(|e| werr(path, e))?;
    f.sync_all().map_err(|e| werr(path, e))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn read(p: &Path) -> String {
        std::fs::read_to_string(p).unwrap_or_else(|e| format!("<{e}>"))
    }

    /// Every file in `dir` and its subfolders, sorted, as "name=contents".
    fn listing(dir: &Path) -> Vec<String> {
        let mut out = Vec::new();
        let mut stack = vec![dir.to_path_buf()];
        while let Some(d) = stack.pop() {
            for e in std::fs::read_dir(&d).unwrap().flatten() {
                let p = e.path();
                if p.is_dir() {
                    stack.push(p);
                } else if e.file_name() != LOCK_FILE {
                    out.push(format!("{}={}", p.strip_prefix(dir).unwrap().display(), read(&p)));
                }
            }
        }
        out.sort();
        out
    }

    /// A run's three files, over an older run's two: all new after the commit, nothing else
    /// left in the folder.
    #[test]
    fn a_commit_replaces_the_whole_set() {
        let tmp = tempfile::tempdir().unwrap();
        let dir = tmp.path().join("out");
        let out = OutputDir::open(&dir).unwrap();
        let mut t = out.transaction();
        t.stage(&dir.join("a.csv"), &[b"old a"]).unwrap();
        t.stage(&dir.join("sub/b.glb"), &[b"old ", b"b"]).unwrap();
        t.commit().unwrap();
        let mut t = out.transaction();
        t.stage(&dir.join("a.csv"), &[b"new a"]).unwrap();
        t.stage(&dir.join("sub/b.glb"), &[b"new b"]).unwrap();
        t.stage(&dir.join("run.json"), &[b"{}"]).unwrap();
        let written = t.commit().unwrap();
        assert_eq!(written.len(), 3);
        assert_eq!(listing(&dir), ["a.csv=new a", "run.json={}", "sub/b.glb=new b"]);
    }

    /// A rename that fails half-way through the commit (the second of three) leaves the folder
    /// exactly as it was: the first new file taken back, the old ones returned, no temporary
    /// file left; and a folder in the way of an output is found before anything changes.
    #[test]
    fn a_failed_commit_changes_nothing() {
        let tmp = tempfile::tempdir().unwrap();
        let dir = tmp.path().join("out");
        let out = OutputDir::open(&dir).unwrap();
        let mut t = out.transaction();
        t.stage(&dir.join("a.csv"), &[b"old a"]).unwrap();
        t.stage(&dir.join("b.csv"), &[b"old b"]).unwrap();
        t.commit().unwrap();
        let before = listing(&dir);
        let mut t = out.transaction();
        t.stage(&dir.join("a.csv"), &[b"new a"]).unwrap();
        t.stage(&dir.join("b.csv"), &[b"new b"]).unwrap();
        t.stage(&dir.join("c.csv"), &[b"new c"]).unwrap();
        t.fail_at = Some(1);
        let e = t.commit().unwrap_err();
        assert!(e.reason.contains("a failure made by the test"), "{e}");
        assert_eq!(listing(&dir), before);

        std::fs::create_dir(dir.join("c.csv")).unwrap();
        let mut t = out.transaction();
        t.stage(&dir.join("a.csv"), &[b"new a"]).unwrap();
        t.stage(&dir.join("c.csv"), &[b"new c"]).unwrap();
        let e = t.commit().unwrap_err();
        assert!(e.reason.contains("a folder has this output's name"), "{e}");
        assert_eq!(listing(&dir), before);
    }

    /// A run killed in the middle of its commit (journal written, the first old file moved
    /// aside and its new file in place, the second not yet) and one killed while staging
    /// (temporary files only): the next run to open the folder puts the old files back and
    /// removes every temporary file, and says so.
    #[test]
    fn the_next_run_clears_what_a_killed_run_left() {
        let tmp = tempfile::tempdir().unwrap();
        let dir = tmp.path().join("out");
        {
            let out = OutputDir::open(&dir).unwrap();
            let mut t = out.transaction();
            t.stage(&dir.join("a.csv"), &[b"old a"]).unwrap();
            t.stage(&dir.join("sub/b.csv"), &[b"old b"]).unwrap();
            t.commit().unwrap();
        }
        let before = listing(&dir);
        {
            let out = OutputDir::open(&dir).unwrap();
            let mut t = out.transaction();
            t.stage(&dir.join("a.csv"), &[b"new a"]).unwrap();
            t.stage(&dir.join("sub/b.csv"), &[b"new b"]).unwrap();
            t.stage(&dir.join("c.csv"), &[b"new c"]).unwrap();
            // The commit, by hand, up to the point where the process dies.
            let entries: Vec<Entry> = t
                .staged
                .iter()
                .map(|(tmp, target)| {
                    let rel = |p: &Path| p.strip_prefix(&dir).unwrap().to_str().unwrap().to_owned();
                    let backup = target.exists().then(|| rel(&target.with_file_name(".heft-dead.old")));
                    Entry {
                        target: rel(target),
                        backup,
                        staged: rel(tmp),
                    }
                })
                .collect();
            write_synced(&dir.join(JOURNAL_FILE), &serde_json::to_vec(&entries).unwrap()).unwrap();
            let e0 = &entries[0];
            std::fs::rename(dir.join(&e0.target), dir.join(e0.backup.as_ref().unwrap())).unwrap();
            std::fs::rename(dir.join(&e0.staged), dir.join(&e0.target)).unwrap();
            let e1 = &entries[1];
            std::fs::rename(dir.join(&e1.target), dir.join(e1.backup.as_ref().unwrap())).unwrap();
            // Killed: the transaction's temporary paths are never cleaned up.
            for (p, _) in t.staged.drain(..) {
                let _ = p.keep();
            }
        }
        // A second dead run, killed while staging.
        std::fs::write(dir.join(".heft-x1.partial"), b"half").unwrap();
        std::fs::write(dir.join("sub/.heft-x2.partial.svg"), b"half").unwrap();
        let out = OutputDir::open(&dir).unwrap();
        assert_eq!(listing(&dir), before);
        assert_eq!(out.cleared().len(), 2, "{:?}", out.cleared());
    }

    /// Two runs into one folder: the second is refused while the first holds it, naming the
    /// first's process, and gets the folder once the first is done.
    #[test]
    fn a_folder_in_use_is_refused() {
        let tmp = tempfile::tempdir().unwrap();
        let dir = tmp.path().join("out");
        let first = OutputDir::open(&dir).unwrap();
        let e = OutputDir::open(&dir).unwrap_err();
        assert!(
            e.reason
                .contains(&format!("another heft run (process {})", std::process::id()))
                && e.reason.contains("give another --out"),
            "{e}"
        );
        drop(first);
        OutputDir::open(&dir).unwrap();
    }

    /// A subfolder of the output folder that is a link to a folder elsewhere (another disk:
    /// /dev/shm is a memory file system where there is one): its files are staged beside their
    /// targets, so the renames stay within one file system, and the commit works.
    #[test]
    fn a_linked_subfolder_is_written() {
        let tmp = tempfile::tempdir().unwrap();
        let shm = Path::new("/dev/shm");
        let elsewhere = if shm.is_dir() {
            tempfile::tempdir_in(shm).unwrap()
        } else {
            tempfile::tempdir().unwrap()
        };
        let dir = tmp.path().join("out");
        std::fs::create_dir_all(&dir).unwrap();
        std::os::unix::fs::symlink(elsewhere.path(), dir.join("bakes")).unwrap();
        let out = OutputDir::open(&dir).unwrap();
        let mut t = out.transaction();
        t.stage(&dir.join("a.csv"), &[b"a"]).unwrap();
        t.stage(&dir.join("bakes/hair.glb"), &[b"glb"]).unwrap();
        t.commit().unwrap();
        assert_eq!(read(&elsewhere.path().join("hair.glb")), "glb");
        assert_eq!(listing(elsewhere.path()), ["hair.glb=glb"]);
    }
}
