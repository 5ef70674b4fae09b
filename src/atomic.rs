//! The one way rotorsift writes a file: every output (recordings, models, CSV, pictures,
//! HTML pages) goes through [`AtomicFile`] or [`write_atomic`], so a target is either left
//! as it was or replaced whole, and no temporary file is left behind.
//!
//! On Linux the bytes go to an unnamed file in the target's folder (`O_TMPFILE`), which
//! vanishes by itself if the process dies or fails; on commit it is synced, given a unique
//! temporary name (`.NAME.PID.COUNTER.tmp`) and renamed over the target at once, so the
//! name exists only for the instant between the link and the rename. Where the folder's
//! file system has no unnamed files, the bytes go to that named temporary from the start,
//! and a guard removes it on every error path (and when the writer is dropped unfinished).
//! Temporaries of the same target left by a process that no longer runs are removed the
//! next time the target is written. Every error names the real target, never the temporary.

use std::fs::{File, OpenOptions};
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

use crate::error::{Error, Result};

static COUNTER: AtomicU64 = AtomicU64::new(0);

/// A file being written; it appears at its target only on [`AtomicFile::commit`].
pub struct AtomicFile {
    target: PathBuf,
    dir: PathBuf,
    out: Option<BufWriter<File>>,
    /// The named temporary, when the bytes go to one (not for unnamed files until commit).
    tmp: Option<PathBuf>,
}

/// The folder a target lives in (`.` for a bare file name).
fn folder_of(target: &Path) -> PathBuf {
    match target.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

/// A fresh temporary name beside `target`: `.NAME.PID.COUNTER.tmp`.
fn temp_name(dir: &Path, name: &str) -> PathBuf {
    let n = COUNTER.fetch_add(1, Ordering::Relaxed);
    dir.join(format!(".{name}.{}.{n}.tmp", std::process::id()))
}

/// Whether process `pid` still runs (unknown counts as running).
fn process_alive(pid: u32) -> bool {
    if cfg!(target_os = "linux") {
        Path::new("/proc").join(pid.to_string()).exists()
    } else {
        true
    }
}

/// Removes `.NAME.PID.N.tmp` files of `name` in `dir` whose process no longer runs.
fn sweep_stale(dir: &Path, name: &str) {
    let Ok(rd) = std::fs::read_dir(dir) else {
        return;
    };
    let prefix = format!(".{name}.");
    for e in rd.flatten() {
        let file = e.file_name();
        let Some(f) = file.to_str() else { continue };
        let Some(rest) = f.strip_prefix(&prefix).and_then(|r| r.strip_suffix(".tmp")) else {
            continue;
        };
        let mut parts = rest.split('.');
        let (Some(pid), Some(n), None) = (parts.next(), parts.next(), parts.next()) else {
            continue;
        };
        let (Ok(pid), Ok(_)) = (pid.parse::<u32>(), n.parse::<u64>()) else {
            continue;
        };
        if pid != std::process::id() && !process_alive(pid) {
            let _ = std::fs::remove_file(e.path());
        }
    }
}

/// Opens an unnamed file in `dir` (Linux `O_TMPFILE`); `None` where unsupported.
#[cfg(target_os = "linux")]
fn open_unnamed(dir: &Path) -> std::io::Result<Option<File>> {
    use std::os::unix::fs::OpenOptionsExt;
    match OpenOptions::new()
        .write(true)
        .mode(0o644)
        .custom_flags(libc::O_TMPFILE)
        .open(dir)
    {
        Ok(f) => Ok(Some(f)),
        Err(e)
            if matches!(
                e.raw_os_error(),
                Some(libc::EOPNOTSUPP) | Some(libc::EINVAL) | Some(libc::EISDIR)
            ) =>
        {
            Ok(None)
        }
        Err(e) => Err(e),
    }
}

#[cfg(not(target_os = "linux"))]
fn open_unnamed(_dir: &Path) -> std::io::Result<Option<File>> {
    Ok(None)
}

/// Gives the unnamed file `f` the name `to` (fails if `to` exists).
#[cfg(target_os = "linux")]
fn link_unnamed(f: &File, to: &Path) -> std::io::Result<()> {
    use std::ffi::CString;
    use std::os::unix::ffi::OsStrExt;
    use std::os::unix::io::AsRawFd;
    let from = CString::new(format!("/proc/self/fd/{}", f.as_raw_fd()))?;
    let to = CString::new(to.as_os_str().as_bytes())?;
    // SAFETY: both paths are valid NUL-terminated strings that outlive the call.
    let r = unsafe {
        libc::linkat(
            libc::AT_FDCWD,
            from.as_ptr(),
            libc::AT_FDCWD,
            to.as_ptr(),
            libc::AT_SYMLINK_FOLLOW,
        )
    };
    if r == 0 {
        Ok(())
    } else {
        Err(std::io::Error::last_os_error())
    }
}

#[cfg(not(target_os = "linux"))]
fn link_unnamed(_f: &File, _to: &Path) -> std::io::Result<()> {
    Err(std::io::Error::from(std::io::ErrorKind::Unsupported))
}

impl AtomicFile {
    /// Starts writing `target`. Refuses a target that is a directory; a missing folder
    /// gives the system's error, naming the target.
    pub fn create(target: &Path) -> Result<AtomicFile> {
        let name = target
            .file_name()
            .ok_or_else(|| Error::format(target, "output path has no file name"))?
            .to_string_lossy()
            .into_owned();
        if target.is_dir() {
            return Err(Error::format(
                target,
                "is a directory; expected a file name to write",
            ));
        }
        let dir = folder_of(target);
        sweep_stale(&dir, &name);
        if let Some(f) = open_unnamed(&dir).map_err(|e| Error::io(target, e))? {
            return Ok(AtomicFile {
                target: target.to_path_buf(),
                dir,
                out: Some(BufWriter::with_capacity(1 << 16, f)),
                tmp: None,
            });
        }
        loop {
            let tmp = temp_name(&dir, &name);
            match OpenOptions::new().write(true).create_new(true).open(&tmp) {
                Ok(f) => {
                    return Ok(AtomicFile {
                        target: target.to_path_buf(),
                        dir,
                        out: Some(BufWriter::with_capacity(1 << 16, f)),
                        tmp: Some(tmp),
                    })
                }
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => continue,
                Err(e) => return Err(Error::io(target, e)),
            }
        }
    }

    /// The path the file will have once committed.
    pub fn target(&self) -> &Path {
        &self.target
    }

    /// Appends bytes; an error names the target.
    pub fn write_all(&mut self, bytes: &[u8]) -> Result<()> {
        let out = self.out.as_mut().expect("AtomicFile used after commit");
        out.write_all(bytes).map_err(|e| Error::io(&self.target, e))
    }

    /// Flushes, syncs and moves the file into place, replacing any earlier file whole.
    pub fn commit(mut self) -> Result<()> {
        let target = self.target.clone();
        let out = self.out.take().expect("AtomicFile committed twice");
        let f = out
            .into_inner()
            .map_err(|e| Error::io(&target, e.into_error()))?;
        f.sync_all().map_err(|e| Error::io(&target, e))?;
        let tmp = match self.tmp.clone() {
            Some(t) => t,
            None => {
                let name = target
                    .file_name()
                    .map(|s| s.to_string_lossy().into_owned())
                    .unwrap_or_default();
                loop {
                    let t = temp_name(&self.dir, &name);
                    match link_unnamed(&f, &t) {
                        Ok(()) => break t,
                        Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => continue,
                        Err(e) => return Err(Error::io(&target, e)),
                    }
                }
            }
        };
        // from here the guard removes the named temporary on failure
        self.tmp = Some(tmp.clone());
        drop(f);
        std::fs::rename(&tmp, &target).map_err(|e| Error::io(&target, e))?;
        self.tmp = None;
        // make the rename itself durable (best effort: not every system syncs folders)
        if let Ok(d) = File::open(&self.dir) {
            let _ = d.sync_all();
        }
        Ok(())
    }
}

impl Write for AtomicFile {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        self.out
            .as_mut()
            .ok_or_else(|| std::io::Error::other("AtomicFile used after commit"))?
            .write(buf)
    }
    fn flush(&mut self) -> std::io::Result<()> {
        match self.out.as_mut() {
            Some(o) => o.flush(),
            None => Ok(()),
        }
    }
}

impl Drop for AtomicFile {
    fn drop(&mut self) {
        // an unnamed file vanishes when closed; a named temporary is removed
        drop(self.out.take());
        if let Some(t) = self.tmp.take() {
            let _ = std::fs::remove_file(t);
        }
    }
}

/// Writes `bytes` to `path` atomically (see [`AtomicFile`]).
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<()> {
    let mut f = AtomicFile::create(path)?;
    f.write_all(bytes)?;
    f.commit()
}

/// Puts `source` in place at `target` as a hard link (no bytes copied), atomically: the
/// link gets a unique temporary name beside the target and is renamed over it, so the
/// target is the old file or the new one, never a half. Returns `Ok(false)` when the file
/// system cannot link the two (another device, no hard links): the caller copies instead.
pub fn link_atomic(source: &Path, target: &Path) -> Result<bool> {
    let name = target
        .file_name()
        .ok_or_else(|| Error::format(target, "output path has no file name"))?
        .to_string_lossy()
        .into_owned();
    let dir = folder_of(target);
    sweep_stale(&dir, &name);
    loop {
        let tmp = temp_name(&dir, &name);
        match std::fs::hard_link(source, &tmp) {
            Ok(()) => {
                if let Err(e) = std::fs::rename(&tmp, target) {
                    let _ = std::fs::remove_file(&tmp);
                    return Err(Error::io(target, e));
                }
                return Ok(true);
            }
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => continue,
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
                let which = if source.exists() { target } else { source };
                return Err(Error::io(which, e));
            }
            Err(_) => return Ok(false),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn leftovers(dir: &Path) -> Vec<String> {
        std::fs::read_dir(dir)
            .unwrap()
            .flatten()
            .map(|e| e.file_name().to_string_lossy().into_owned())
            .filter(|n| n.ends_with(".tmp"))
            .collect()
    }

    #[test]
    fn replaces_whole_and_leaves_no_temporary() {
        let d = tempfile::tempdir().unwrap();
        let p = d.path().join("a.txt");
        write_atomic(&p, b"old").unwrap();
        write_atomic(&p, b"new contents").unwrap();
        assert_eq!(std::fs::read(&p).unwrap(), b"new contents");
        assert!(leftovers(d.path()).is_empty());
    }

    #[test]
    fn dropped_unfinished_leaves_old_file_and_no_temporary() {
        let d = tempfile::tempdir().unwrap();
        let p = d.path().join("m.json");
        write_atomic(&p, b"old").unwrap();
        let mut f = AtomicFile::create(&p).unwrap();
        f.write_all(b"half").unwrap();
        drop(f);
        assert_eq!(std::fs::read(&p).unwrap(), b"old");
        assert!(leftovers(d.path()).is_empty());
    }

    #[test]
    fn stale_temporary_of_a_dead_process_is_swept() {
        let d = tempfile::tempdir().unwrap();
        // pid 4194304 is above Linux's largest pid (pid_max <= 2^22), so never runs
        let stale = d.path().join(".x.csv.4194304.0.tmp");
        std::fs::write(&stale, b"partial").unwrap();
        let other = d.path().join(".y.csv.4194304.0.tmp");
        std::fs::write(&other, b"not ours").unwrap();
        write_atomic(&d.path().join("x.csv"), b"a,b\n").unwrap();
        if cfg!(target_os = "linux") {
            assert!(!stale.exists());
        }
        assert!(
            other.exists(),
            "a temporary of another target is left alone"
        );
    }

    #[test]
    fn directory_target_and_missing_folder_name_the_target() {
        let d = tempfile::tempdir().unwrap();
        let sub = d.path().join("pic.png");
        std::fs::create_dir(&sub).unwrap();
        let e = write_atomic(&sub, b"x").unwrap_err().to_string();
        assert!(e.contains("pic.png") && !e.contains(".pic.png."), "{e}");
        assert!(leftovers(d.path()).is_empty());
        let missing = d.path().join("nope").join("x.png");
        let e = write_atomic(&missing, b"x").unwrap_err().to_string();
        assert!(e.contains("nope/x.png") && !e.contains(".x.png."), "{e}");
    }
}
