//! The output folder: every file of a run is written into a staging folder beside `--out` and
//! moved into place only when all of them are complete, so a failed or killed run never leaves a
//! partial folder; a marker and a lock keep `--force` to folders of the same command and one run
//! at a time.

use std::path::{Path, PathBuf};

use crate::core::error::{Error, Result};

/// The marker file in every folder hostcut writes. `--force` replaces only a folder that holds
/// it, and only with a run of the same command, so no user's own folder is ever emptied.
pub const MARKER: &str = ".hostcut-folder";

/// Test hook (tests/safety.rs), a comma-separated list: `kill:STEP` makes the process kill
/// itself with SIGKILL at that step of [`Staging::commit`] (`staged`, `swapped`, `moved-old`),
/// `pause:STEP` waits there for three seconds (holding the folder's lock), and `no-exchange`
/// forces the two-rename fallback used where the file system cannot swap folders. Documented in
/// DEVELOPERS.md; it changes nothing unless set.
const TEST_HOOK: &str = "HOSTCUT_TEST_HOOK";

fn test_hook_is(value: &str) -> bool {
    std::env::var(TEST_HOOK).is_ok_and(|v| v.split(',').any(|part| part.trim() == value))
}

fn checkpoint(step: &str) {
    if test_hook_is(&format!("pause:{step}")) {
        std::thread::sleep(std::time::Duration::from_secs(3));
    }
    if test_hook_is(&format!("kill:{step}")) {
        let _ =
            rustix::process::kill_process(rustix::process::getpid(), rustix::process::Signal::KILL);
        // SIGKILL cannot be caught; the process ends here.
        std::thread::sleep(std::time::Duration::from_secs(60));
    }
}

/// The command a hostcut output folder was written by, from its marker; `None` when the folder
/// has no marker (it is not one of ours).
pub fn written_by(folder: &Path) -> Option<String> {
    let text = std::fs::read_to_string(folder.join(MARKER)).ok()?;
    text.lines()
        .find_map(|l| l.strip_prefix("command = "))
        .map(|c| c.trim().trim_matches('"').to_string())
}

fn marker_text(command: &str) -> String {
    format!(
        "# Written by hostcut {}: `hostcut {command} --force` may replace this folder with a new run.\ncommand = \"{command}\"\n",
        env!("CARGO_PKG_VERSION")
    )
}

/// An exclusive lock on writing one output folder, held for the whole run: a second run into
/// the same `--out` is refused instead of mixing two runs' files. The lock is an advisory
/// `flock` on `.NAME.hostcut-lock` beside the folder, released by the kernel if the process
/// dies, and the file is removed when the run ends.
struct OutputLock {
    path: PathBuf,
    file: std::fs::File,
}

impl OutputLock {
    fn acquire(path: PathBuf, out: &Path) -> Result<OutputLock> {
        use rustix::fs::{FlockOperation, flock};
        use std::os::unix::fs::MetadataExt;
        loop {
            let file = std::fs::OpenOptions::new()
                .create(true)
                .truncate(false)
                .write(true)
                .open(&path)
                .map_err(|e| Error::io("create the lock file", &path, e))?;
            if flock(&file, FlockOperation::NonBlockingLockExclusive).is_err() {
                return Err(Error::input_with_hint(
                    format!(
                        "another hostcut run is writing `{}` right now",
                        out.display()
                    ),
                    "wait for it to finish, or give this run another `--out`",
                ));
            }
            // The file may have been removed (by the run that held it) between our open and our
            // lock: then we hold a lock nobody else can see, so take the lock again.
            let held = file.metadata().map(|m| (m.dev(), m.ino()));
            let now = std::fs::metadata(&path).map(|m| (m.dev(), m.ino()));
            match (held, now) {
                (Ok(a), Ok(b)) if a == b => return Ok(OutputLock { path, file }),
                _ => continue,
            }
        }
    }
}

impl Drop for OutputLock {
    fn drop(&mut self) {
        // Remove the file while still holding the lock; a run waiting on the old file sees it
        // gone and locks a new one.
        let _ = std::fs::remove_file(&self.path);
        let _ = &self.file;
    }
}

/// A staging folder beside `--out` that becomes `--out` on [`Staging::commit`] and is removed
/// otherwise.
///
/// Commit swaps whole folders: a new `--out` is a rename; replacing an earlier run (`--force`)
/// exchanges the two folders in one atomic rename (Linux `renameat2(RENAME_EXCHANGE)`), then
/// removes the old one. A reader — or a run killed at any moment — sees either the old folder
/// whole or the new one whole, never a mix, and files of the earlier run never survive into the
/// new one. `--force` replaces only a folder that holds hostcut's marker written by the same
/// command; anything else is refused.
pub struct Staging {
    out: PathBuf,
    dir: PathBuf,
    command: &'static str,
    done: bool,
    _lock: OutputLock,
}

fn is_empty_dir(path: &Path) -> Result<bool> {
    Ok(std::fs::read_dir(path)
        .map_err(|e| Error::io("read", path, e))?
        .next()
        .is_none())
}

/// Whether process `pid` is still running.
fn alive(pid: u32) -> bool {
    Path::new(&format!("/proc/{pid}")).exists()
}

/// The absolute path of `out`, with `.` and `..` resolved through the parent folder.
fn absolute_out(out: &Path) -> Result<PathBuf> {
    let abs = std::path::absolute(out).map_err(|e| Error::io("resolve", out, e))?;
    if let Ok(real) = abs.canonicalize() {
        return Ok(real);
    }
    // It does not exist yet: resolve its parent (which may not exist either).
    let name = abs.file_name().map(|n| n.to_os_string());
    match (abs.parent(), name) {
        (Some(parent), Some(name)) => match parent.canonicalize() {
            Ok(p) => Ok(p.join(name)),
            Err(_) => Ok(abs),
        },
        _ => Ok(abs),
    }
}

impl Staging {
    /// Check that `out` may be written by `command` (new, empty, or with `force` a folder this
    /// tool wrote for the same command), lock it against a concurrent run, and make the staging
    /// folder with the marker.
    pub fn new(out: &Path, force: bool, command: &'static str) -> Result<Staging> {
        let out = absolute_out(out)?;
        let (Some(parent), Some(name)) = (out.parent(), out.file_name()) else {
            return Err(Error::input_with_hint(
                format!("`{}` cannot be an output folder", out.display()),
                "give `--out` a folder name, e.g. `--out run1`",
            ));
        };
        let name = name.to_string_lossy().into_owned();
        std::fs::create_dir_all(parent).map_err(|e| Error::io("create", parent, e))?;
        let lock = OutputLock::acquire(parent.join(format!(".{name}.hostcut-lock")), &out)?;
        let partial = format!(".{name}.partial-");
        let old = format!(".{name}.old-");
        // Folders left by runs that were killed (their process is gone): a staging folder is
        // removed; an old folder moved aside by the two-rename fallback is put back if the new
        // one never arrived. Both are ours: they hold the marker.
        if let Ok(entries) = std::fs::read_dir(parent) {
            for entry in entries.flatten() {
                let file_name = entry.file_name().to_string_lossy().into_owned();
                let dead = |prefix: &str| {
                    file_name
                        .strip_prefix(prefix)
                        .and_then(|p| p.parse::<u32>().ok())
                        .is_some_and(|pid| !alive(pid))
                };
                if !entry.path().join(MARKER).is_file() {
                    continue;
                }
                if dead(&partial) {
                    let _ = std::fs::remove_dir_all(entry.path());
                } else if dead(&old) {
                    if out.exists() {
                        let _ = std::fs::remove_dir_all(entry.path());
                    } else {
                        let _ = std::fs::rename(entry.path(), &out);
                    }
                }
            }
        }
        Self::check_target(&out, force, command)?;
        let dir = parent.join(format!("{partial}{}", std::process::id()));
        if dir.exists() {
            let _ = std::fs::remove_dir_all(&dir);
        }
        std::fs::create_dir_all(&dir).map_err(|e| Error::io("create", &dir, e))?;
        let staging = Staging {
            out,
            dir,
            command,
            done: false,
            _lock: lock,
        };
        staging.write(MARKER, marker_text(command))?;
        Ok(staging)
    }

    /// Refuse a target that is not a folder, a non-empty folder without `force`, and with
    /// `force` a folder that is not hostcut's output of the same command.
    fn check_target(out: &Path, force: bool, command: &str) -> Result<()> {
        if !out.exists() {
            return Ok(());
        }
        if !out.is_dir() {
            return Err(Error::input_with_hint(
                format!("`{}` exists and is not a folder", out.display()),
                "give `--out` a new folder name",
            ));
        }
        if is_empty_dir(out)? {
            return Ok(());
        }
        if !force {
            return Err(Error::input_with_hint(
                format!("output folder `{}` is not empty", out.display()),
                "give a new folder, or add `--force` to replace an earlier run of this command there",
            ));
        }
        match written_by(out) {
            Some(c) if c == command => Ok(()),
            Some(c) => Err(Error::input_with_hint(
                format!(
                    "`{}` holds the output of `hostcut {c}`; `--force` replaces only an earlier `hostcut {command}` run",
                    out.display()
                ),
                "give this run its own folder",
            )),
            None => Err(Error::input_with_hint(
                format!(
                    "`{}` was not written by hostcut (it has no {MARKER} marker), so `--force` will not replace it",
                    out.display()
                ),
                "give a new folder: hostcut never deletes a folder it did not write",
            )),
        }
    }

    /// The final output folder.
    pub fn out(&self) -> &Path {
        &self.out
    }

    /// The staging folder itself (files are written here until commit).
    pub fn dir(&self) -> &Path {
        &self.dir
    }

    /// Path of `name` inside the staging folder.
    pub fn path(&self, name: &str) -> PathBuf {
        self.dir.join(name)
    }

    pub fn write(&self, name: &str, contents: impl AsRef<[u8]>) -> Result<()> {
        let path = self.path(name);
        if let Some(parent) = path.parent() {
            std::fs::create_dir_all(parent).map_err(|e| Error::io("create", parent, e))?;
        }
        std::fs::write(&path, contents).map_err(|e| Error::io("write", &path, e))
    }

    /// Move the staged folder into place as `out`, whole.
    pub fn commit(mut self) -> Result<PathBuf> {
        let io = |action, path: &Path, e: std::io::Error| Error::io(action, path, e);
        checkpoint("staged");
        // Checked again: the folder may have changed since the run started.
        Self::check_target(&self.out, true, self.command)?;
        if !self.out.exists() || is_empty_dir(&self.out)? {
            // rename(2) replaces an empty folder atomically.
            std::fs::rename(&self.dir, &self.out)
                .map_err(|e| io("move outputs to", &self.out, e))?;
            self.done = true;
            return Ok(self.out.clone());
        }
        let exchanged = !test_hook_is("no-exchange")
            && rustix::fs::renameat_with(
                rustix::fs::CWD,
                &self.dir,
                rustix::fs::CWD,
                &self.out,
                rustix::fs::RenameFlags::EXCHANGE,
            )
            .is_ok();
        if exchanged {
            // The staging path now holds the earlier run's folder.
            checkpoint("swapped");
            self.done = true;
            std::fs::remove_dir_all(&self.dir).map_err(|e| io("remove", &self.dir, e))?;
            return Ok(self.out.clone());
        }
        // Two renames where the file system cannot exchange folders; a run killed between them
        // leaves the old folder aside, and the next run puts it back (see `Staging::new`).
        let name = self
            .out
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default();
        let aside = self
            .dir
            .with_file_name(format!(".{name}.old-{}", std::process::id()));
        std::fs::rename(&self.out, &aside).map_err(|e| io("move aside", &self.out, e))?;
        checkpoint("moved-old");
        std::fs::rename(&self.dir, &self.out).map_err(|e| io("move outputs to", &self.out, e))?;
        self.done = true;
        std::fs::remove_dir_all(&aside).map_err(|e| io("remove", &aside, e))?;
        Ok(self.out.clone())
    }
}

impl Drop for Staging {
    fn drop(&mut self) {
        if !self.done {
            let _ = std::fs::remove_dir_all(&self.dir);
        }
    }
}

/// Write a file the user named outside any output folder (e.g. `--write-mps`): refused if it
/// exists (hostcut never overwrites a file it did not write in this run) or if its folder does
/// not; `write` fills a temporary file beside it, which is then linked into place without ever
/// replacing anything.
pub fn write_new_file(
    path: &Path,
    flag: &str,
    write: impl FnOnce(&Path) -> Result<()>,
) -> Result<()> {
    check_new_file(path, flag)?;
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    // The temporary keeps the extension: writers choose their format by it.
    let temporary = path.with_file_name(format!(".partial-{}-{name}", std::process::id()));
    let result = write(&temporary).and_then(|()| {
        std::fs::hard_link(&temporary, path).map_err(|e| {
            if e.kind() == std::io::ErrorKind::AlreadyExists {
                Error::input_with_hint(
                    format!(
                        "`{flag} {}`: the file appeared while this run was working",
                        path.display()
                    ),
                    "give a new file name",
                )
            } else {
                Error::io("write", path, e)
            }
        })
    });
    let _ = std::fs::remove_file(&temporary);
    result
}

/// Refuse `path` for a new file if it exists or its folder does not.
pub fn check_new_file(path: &Path, flag: &str) -> Result<()> {
    if path.exists() {
        return Err(Error::input_with_hint(
            format!("`{flag} {}`: the file exists", path.display()),
            "give a new file name; hostcut never overwrites a file it did not write in this run",
        ));
    }
    let parent = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    if !parent.is_dir() {
        return Err(Error::input_with_hint(
            format!(
                "`{flag} {}`: the folder `{}` does not exist",
                path.display(),
                parent.display()
            ),
            "create the folder first, or give a path in an existing folder",
        ));
    }
    Ok(())
}
