//! File output. A regular file is written atomically: to a temporary file beside it, flushed to
//! disk, then renamed into place, so a failed or interrupted write leaves the target as it was.
//!
//! What an output path names decides how it is written ([`OutputTarget`]):
//! - a regular file, or a path that does not exist yet: atomically, keeping the replaced file's
//!   permission bits (not its owner);
//! - a symbolic link: the file it names is written (atomically, as above), the link stays;
//! - `-`: standard output;
//! - a character device or a FIFO (a terminal, `/dev/null`, a named pipe), and any path under
//!   `/dev` or `/proc` (such as `/dev/stdout`): written through in place, never replaced;
//! - a directory, a block device or a socket: refused.
//!
//! Temporary files in flight are registered, so the binary can remove them when it is
//! interrupted ([`remove_partial_outputs`]).

use std::fs::{File, OpenOptions};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::Mutex;

use super::ReportError;

/// How an output path is written.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum OutputTarget {
    /// A regular file (existing or new) at this path, symbolic links resolved.
    File(PathBuf),
    /// Standard output (the path `-`).
    Stdout,
    /// A character device, FIFO or a path under /dev or /proc, written through in place.
    Stream(PathBuf),
}

/// Most symbolic links followed for one output path (as the kernel's limit).
const MAX_LINKS: usize = 40;

/// Resolves what `target` names; refuses a directory, a block device, a socket and a link loop.
pub fn output_target(target: &Path) -> std::io::Result<OutputTarget> {
    use std::os::unix::fs::FileTypeExt;
    if target.as_os_str() == "-" {
        return Ok(OutputTarget::Stdout);
    }
    let system = target.starts_with("/dev") || target.starts_with("/proc");
    match std::fs::metadata(target) {
        Ok(meta) if meta.is_dir() => Err(std::io::Error::other("is a directory")),
        Ok(_) if system => Ok(OutputTarget::Stream(target.to_path_buf())),
        Ok(meta) if meta.is_file() => Ok(OutputTarget::File(std::fs::canonicalize(target)?)),
        Ok(meta) if meta.file_type().is_char_device() || meta.file_type().is_fifo() => {
            Ok(OutputTarget::Stream(target.to_path_buf()))
        }
        Ok(_) => Err(std::io::Error::other("is a block device or a socket; refusing to write to it")),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(OutputTarget::File(follow_dangling(target)?)),
        Err(e) => Err(e),
    }
}

/// The path a chain of symbolic links ending at a missing file names (`target` itself when it
/// is no link), so a link to a report not written yet creates that report.
fn follow_dangling(target: &Path) -> std::io::Result<PathBuf> {
    let mut path = target.to_path_buf();
    for _ in 0..MAX_LINKS {
        match std::fs::symlink_metadata(&path) {
            Ok(meta) if meta.file_type().is_symlink() => {
                let link = std::fs::read_link(&path)?;
                path = match path.parent() {
                    Some(dir) if link.is_relative() => dir.join(link),
                    _ => link,
                };
            }
            _ => return Ok(path),
        }
    }
    Err(std::io::Error::other("too many levels of symbolic links"))
}

/// Temporary files being written, removed by [`remove_partial_outputs`] on an interrupt.
static IN_FLIGHT: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

fn register(tmp: &Path) {
    if let Ok(mut v) = IN_FLIGHT.lock() {
        v.push(tmp.to_path_buf());
    }
}

fn unregister(tmp: &Path) {
    if let Ok(mut v) = IN_FLIGHT.lock() {
        v.retain(|p| p != tmp);
    }
}

/// Removes every temporary output file still being written. The binary calls it when SIGINT or
/// SIGTERM arrives, just before it exits; a target is never partial either way.
pub fn remove_partial_outputs() {
    if let Ok(v) = IN_FLIGHT.lock() {
        for p in v.iter() {
            let _ = std::fs::remove_file(p);
        }
    }
}

/// Temporary path beside `target`, keeping its extension (encoders choose a format by it).
pub(crate) fn temp_path_for(target: &Path) -> PathBuf {
    let dir = target.parent().filter(|p| !p.as_os_str().is_empty()).unwrap_or(Path::new("."));
    let name = target.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_else(|| "output".into());
    let ext = target.extension().map(|e| format!(".{}", e.to_string_lossy())).unwrap_or_default();
    dir.join(format!(".{name}.partial-{}{ext}", std::process::id()))
}

/// Writes `bytes` to what `target` names (see the module notes).
pub fn write_atomic(target: &Path, bytes: &[u8]) -> Result<(), ReportError> {
    let io_err = |source| ReportError::Io { file: target.to_path_buf(), source };
    match output_target(target).map_err(io_err)? {
        OutputTarget::File(path) => write_file_atomically(target, &path, |tmp| {
            // A stale temporary file of a killed run with the same process id is replaced; a fresh
            // file is created exclusively, so a symlink planted at the temporary path is not followed.
            let _ = std::fs::remove_file(tmp);
            let mut f = OpenOptions::new().write(true).create_new(true).open(tmp)?;
            f.write_all(bytes)?;
            f.sync_all()
        }),
        OutputTarget::Stdout => write_stdout(bytes).map_err(io_err),
        OutputTarget::Stream(path) => write_stream(&path, bytes).map_err(io_err),
    }
}

/// Lets `produce` write a temporary file (for encoders that want a path), then renames it onto
/// `target` (or copies it to a stream target). On any failure the temporary file is removed and
/// `target` is untouched.
pub fn write_atomic_with<F>(target: &Path, produce: F) -> Result<(), ReportError>
where
    F: FnOnce(&Path) -> std::io::Result<()>,
{
    let io_err = |source| ReportError::Io { file: target.to_path_buf(), source };
    let stream = match output_target(target).map_err(io_err)? {
        OutputTarget::File(path) => return write_file_atomically(target, &path, produce),
        OutputTarget::Stdout => None,
        OutputTarget::Stream(path) => Some(path),
    };
    // A stream has no folder to hold a temporary file: produce in the system's temporary folder.
    let ext = target.extension().map(|e| format!(".{}", e.to_string_lossy())).unwrap_or_default();
    let tmp = std::env::temp_dir().join(format!(".skidroute-output.partial-{}{ext}", std::process::id()));
    register(&tmp);
    let _ = std::fs::remove_file(&tmp);
    let result = produce(&tmp).and_then(|_| std::fs::read(&tmp)).and_then(|bytes| match &stream {
        None => write_stdout(&bytes),
        Some(path) => write_stream(path, &bytes),
    });
    let _ = std::fs::remove_file(&tmp);
    unregister(&tmp);
    result.map_err(io_err)
}

/// The regular-file case: temporary file beside `path` (the resolved target), permission bits
/// of the file it replaces, rename, folder sync. Errors name `shown` (the path as given).
fn write_file_atomically<F>(shown: &Path, path: &Path, produce: F) -> Result<(), ReportError>
where
    F: FnOnce(&Path) -> std::io::Result<()>,
{
    use std::os::unix::fs::PermissionsExt;
    let io_err = |source| ReportError::Io { file: shown.to_path_buf(), source };
    let tmp = temp_path_for(path);
    register(&tmp);
    let kept_mode = std::fs::metadata(path).ok().map(|m| m.permissions().mode() & 0o777);
    let result = produce(&tmp)
        .and_then(|_| match kept_mode {
            Some(mode) => std::fs::set_permissions(&tmp, std::fs::Permissions::from_mode(mode)),
            None => Ok(()),
        })
        .and_then(|_| std::fs::rename(&tmp, path));
    if let Err(e) = result {
        let _ = std::fs::remove_file(&tmp);
        unregister(&tmp);
        return Err(io_err(e));
    }
    unregister(&tmp);
    // Make the rename itself durable; a filesystem that cannot sync a directory is no error.
    if let Ok(dir) = File::open(tmp.parent().unwrap_or(Path::new("."))) {
        let _ = dir.sync_all();
    }
    Ok(())
}

fn write_stdout(bytes: &[u8]) -> std::io::Result<()> {
    let mut out = std::io::stdout().lock();
    out.write_all(bytes)?;
    out.flush()
}

/// Writes through to a device or FIFO (opening a FIFO waits for its reader, as `cat > fifo`).
fn write_stream(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let mut f = OpenOptions::new().write(true).open(path)?;
    f.write_all(bytes)?;
    f.flush()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn failed_write_leaves_target_untouched_and_no_temp() {
        let dir = tempfile::tempdir().expect("tempdir");
        let target = dir.path().join("report.json");
        std::fs::write(&target, b"old").expect("seed");
        let r = write_atomic_with(&target, |tmp| {
            std::fs::write(tmp, b"half")?;
            Err(std::io::Error::other("simulated failure mid-write"))
        });
        assert!(r.is_err());
        assert_eq!(std::fs::read(&target).expect("read"), b"old");
        let left: Vec<_> = std::fs::read_dir(dir.path()).expect("ls").collect();
        assert_eq!(left.len(), 1, "temporary file left behind");
    }

    #[test]
    fn successful_write_replaces_target() {
        let dir = tempfile::tempdir().expect("tempdir");
        let target = dir.path().join("a.csv");
        write_atomic(&target, b"x,y\n").expect("write");
        assert_eq!(std::fs::read(&target).expect("read"), b"x,y\n");
        assert!(temp_path_for(&target).to_string_lossy().ends_with(".csv"));
    }

    #[test]
    fn a_symlink_is_followed_and_kept_and_permissions_survive() {
        use std::os::unix::fs::PermissionsExt;
        let dir = tempfile::tempdir().expect("tempdir");
        std::fs::create_dir(dir.path().join("reports")).expect("mkdir");
        let real = dir.path().join("reports").join("real.json");
        std::fs::write(&real, b"old").expect("seed");
        std::fs::set_permissions(&real, std::fs::Permissions::from_mode(0o640)).expect("chmod");
        let link = dir.path().join("latest.json");
        std::os::unix::fs::symlink("reports/real.json", &link).expect("symlink");
        write_atomic(&link, b"new").expect("write");
        assert!(std::fs::symlink_metadata(&link).expect("meta").file_type().is_symlink());
        assert_eq!(std::fs::read(&real).expect("read"), b"new");
        assert_eq!(std::fs::metadata(&real).expect("meta").permissions().mode() & 0o777, 0o640);
        // A link to a file not written yet creates that file.
        let dangling = dir.path().join("next.json");
        std::os::unix::fs::symlink("reports/next.json", &dangling).expect("symlink");
        write_atomic(&dangling, b"first").expect("write");
        assert_eq!(std::fs::read(dir.path().join("reports").join("next.json")).expect("read"), b"first");
    }

    #[test]
    fn targets_are_classified() {
        let dir = tempfile::tempdir().expect("tempdir");
        assert_eq!(output_target(Path::new("-")).expect("stdout"), OutputTarget::Stdout);
        assert!(output_target(dir.path()).is_err());
        assert!(matches!(output_target(Path::new("/dev/null")), Ok(OutputTarget::Stream(_))));
        let new = dir.path().join("new.json");
        assert_eq!(output_target(&new).expect("file"), OutputTarget::File(new.clone()));
    }
}
