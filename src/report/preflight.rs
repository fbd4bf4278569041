//! Checks of output paths made before any work and before any output is written, so a run that
//! could not write one of its outputs writes none of them (and a long simulation is not wasted
//! on a typo in a folder name). A path passes when it is not a folder, its folder exists and a
//! file can be created there; a plot path must also end in `.svg` or `.png`. `-` (standard
//! output) and paths that name something other than a regular file (a device, a FIFO, a path
//! under /dev or /proc) are left to the writer (`report::atomic`), which writes through to them.

use std::fs::OpenOptions;
use std::path::{Path, PathBuf};

use super::atomic::{output_target, OutputTarget};
use super::ReportError;

/// The folder a file at `path` is written into (`.` for a bare file name).
fn folder_of(path: &Path) -> PathBuf {
    match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

/// Fails with a one-line message naming `path` when a file cannot be written there. What the
/// path names is resolved as the writer resolves it (`report::output_target`): `-` (standard
/// output), a device and a FIFO pass and are left to the writer; a symbolic link, dangling or
/// not, is checked at the file it names.
pub fn check_output_path(path: &Path) -> Result<(), ReportError> {
    let fail = |what: String| ReportError::Output { file: path.to_path_buf(), what };
    if std::fs::metadata(path).is_ok_and(|m| m.is_dir()) {
        return Err(fail("cannot write: is a folder; give a file name".into()));
    }
    let (target, refused) = match output_target(path) {
        Ok(OutputTarget::File(target)) => (target, None),
        Ok(OutputTarget::Stdout | OutputTarget::Stream(_)) => return Ok(()),
        // Said after the folder checks, whose words are plainer (a file used as a folder).
        Err(source) => (path.to_path_buf(), Some(source)),
    };
    if std::fs::metadata(&target).is_ok_and(|m| !m.is_file()) && refused.is_none() {
        return Ok(());
    }
    let folder = folder_of(&target);
    match std::fs::metadata(&folder) {
        Err(_) => return Err(fail(format!("cannot write: folder '{}' does not exist", folder.display()))),
        Ok(m) if !m.is_dir() => return Err(fail(format!("cannot write: '{}' is not a folder", folder.display()))),
        Ok(_) => {}
    }
    if let Some(source) = refused {
        return Err(ReportError::Io { file: path.to_path_buf(), source });
    }
    // Whether a file can be created there is only known by trying: permissions, read-only
    // mounts and access rules all play a part.
    let name = target.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_else(|| "output".into());
    let probe = folder.join(format!(".{name}.probe-{}", std::process::id()));
    match OpenOptions::new().write(true).create_new(true).open(&probe) {
        Ok(_) => {
            let _ = std::fs::remove_file(&probe);
            Ok(())
        }
        Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => Ok(()),
        Err(source) => Err(ReportError::Io { file: path.to_path_buf(), source }),
    }
}

/// [`check_output_path`] for a plot, which must also be `.svg` or `.png`.
pub fn check_plot_path(path: &Path) -> Result<(), ReportError> {
    let ext = path.extension().and_then(|e| e.to_str()).unwrap_or("").to_ascii_lowercase();
    if ext != "svg" && ext != "png" {
        return Err(ReportError::Output {
            file: path.to_path_buf(),
            what: format!("unknown plot format '.{ext}': expected .svg or .png"),
        });
    }
    check_output_path(path)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn missing_folders_folders_and_wrong_plot_formats_are_refused_before_writing() {
        let dir = tempfile::tempdir().expect("tempdir");
        let ok = dir.path().join("report.json");
        assert!(check_output_path(&ok).is_ok());
        assert!(!ok.exists(), "the check writes nothing");
        assert_eq!(std::fs::read_dir(dir.path()).expect("ls").count(), 0, "no probe left behind");
        let missing = dir.path().join("nodir").join("f.png");
        let e = check_plot_path(&missing).expect_err("missing folder").to_string();
        assert!(e.contains("nodir") && e.contains("does not exist") && !e.contains('\n'), "{e}");
        let e = check_output_path(dir.path()).expect_err("a folder").to_string();
        assert!(e.contains("is a folder"), "{e}");
        let e = check_plot_path(&dir.path().join("plot.jpg")).expect_err("format").to_string();
        assert!(e.contains("expected .svg or .png"), "{e}");
        std::fs::write(dir.path().join("file"), b"x").expect("w");
        let e = check_output_path(&dir.path().join("file").join("out.csv")).expect_err("not a folder").to_string();
        assert!(e.contains("is not a folder"), "{e}");
    }

    #[test]
    fn standard_output_devices_and_fifos_are_left_to_the_writer_and_links_are_followed() {
        let dir = tempfile::tempdir().expect("tempdir");
        assert!(check_output_path(Path::new("-")).is_ok());
        assert!(check_output_path(Path::new("/dev/null")).is_ok());
        let fifo = dir.path().join("pipe");
        let made = std::process::Command::new("mkfifo").arg(&fifo).status();
        if made.is_ok_and(|s| s.success()) {
            assert!(check_output_path(&fifo).is_ok(), "a FIFO passes without being opened");
        }
        // A dangling link is checked at the file it names, as the writer would create it.
        let into_missing = dir.path().join("latest.json");
        std::os::unix::fs::symlink("nodir/next.json", &into_missing).expect("symlink");
        let e = check_output_path(&into_missing).expect_err("its folder is missing").to_string();
        assert!(e.contains("nodir") && e.contains("does not exist"), "{e}");
        std::fs::create_dir(dir.path().join("reports")).expect("mkdir");
        let ok = dir.path().join("ok.json");
        std::os::unix::fs::symlink("reports/next.json", &ok).expect("symlink");
        assert!(check_output_path(&ok).is_ok());
        assert!(!dir.path().join("reports").join("next.json").exists(), "the check writes nothing");
    }
}
