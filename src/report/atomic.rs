//! Atomic file output: write to a temporary file beside the target, flush it to disk, then
//! rename it into place. A failed or interrupted write leaves the target as it was.

use std::fs::{File, OpenOptions};
use std::io::Write;
use std::path::{Path, PathBuf};

use super::ReportError;

/// Temporary path beside `target`, keeping its extension (encoders choose a format by it).
pub(crate) fn temp_path_for(target: &Path) -> PathBuf {
    let dir = target.parent().filter(|p| !p.as_os_str().is_empty()).unwrap_or(Path::new("."));
    let name = target.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_else(|| "output".into());
    let ext = target.extension().map(|e| format!(".{}", e.to_string_lossy())).unwrap_or_default();
    dir.join(format!(".{name}.partial-{}{ext}", std::process::id()))
}

/// Writes `bytes` to `target` atomically.
pub fn write_atomic(target: &Path, bytes: &[u8]) -> Result<(), ReportError> {
    write_atomic_with(target, |tmp| {
        // A stale temporary file of a killed run with the same process id is replaced; a fresh
        // file is created exclusively, so a symlink planted at the temporary path is not followed.
        let _ = std::fs::remove_file(tmp);
        let mut f = OpenOptions::new().write(true).create_new(true).open(tmp)?;
        f.write_all(bytes)?;
        f.sync_all()
    })
}

/// Lets `produce` write the temporary file (for encoders that want a path), then renames it
/// onto `target`. On any failure the temporary file is removed and `target` is untouched.
pub fn write_atomic_with<F>(target: &Path, produce: F) -> Result<(), ReportError>
where
    F: FnOnce(&Path) -> std::io::Result<()>,
{
    let tmp = temp_path_for(target);
    let io_err = |source| ReportError::Io { file: target.to_path_buf(), source };
    if let Err(e) = produce(&tmp) {
        let _ = std::fs::remove_file(&tmp);
        return Err(io_err(e));
    }
    if target.is_dir() {
        let _ = std::fs::remove_file(&tmp);
        return Err(io_err(std::io::Error::other("is a directory")));
    }
    if let Err(e) = std::fs::rename(&tmp, target) {
        let _ = std::fs::remove_file(&tmp);
        return Err(io_err(e));
    }
    // Make the rename itself durable; a filesystem that cannot sync a directory is no error.
    if let Ok(dir) = File::open(tmp.parent().unwrap_or(Path::new("."))) {
        let _ = dir.sync_all();
    }
    Ok(())
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
}
