//! Safe output files: never over an input, never a half-file presented as complete.
//!
//! Every file amrx writes goes through [`OutputFile`]:
//! - before anything is opened for writing, the target is compared with every input by file
//!   identity (device and inode on Unix) and by canonical path; a match is refused;
//! - a regular file (or a name that does not exist yet) is written to a temporary file beside
//!   it (`.NAME.amrx-PID.tmp`) and renamed over the target only by [`OutputFile::commit`]; a
//!   run that fails or panics removes the temporary file and leaves the target untouched;
//! - a device node, FIFO or socket is written straight to (it is never replaced by a regular
//!   file), and a symbolic link is written through (the link and its place stay; the file it
//!   points to receives the data).

use crate::{Error, Result};
use std::fs::{File, OpenOptions};
use std::io::Write;
use std::path::{Path, PathBuf};

/// How an [`OutputFile`] reaches its target.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum OutputKind {
    /// A temporary file beside the target, renamed over it on commit.
    Replace,
    /// Written straight to the target: a device node, FIFO, socket, or a symbolic link.
    Direct,
}

/// A file being written; see the [module docs](self).
#[derive(Debug)]
pub struct OutputFile {
    target: PathBuf,
    temp: Option<PathBuf>,
    kind: OutputKind,
}

/// Refuses `output` when it is one of `inputs` (same file by identity or canonical path).
///
/// Inputs or outputs that do not exist yet cannot clash and pass.
pub fn check_not_input(output: &Path, inputs: &[&Path]) -> Result<()> {
    for input in inputs {
        if same_file(output, input) {
            return Err(Error::file(
                output,
                format!(
                    "refusing to write over the input {}: choose another output name",
                    input.display()
                ),
            ));
        }
    }
    Ok(())
}

/// True when `a` and `b` name the same file: by identity when both exist, else by their
/// absolute paths with the folder resolved.
fn same_file(a: &Path, b: &Path) -> bool {
    let (Ok(ma), Ok(mb)) = (std::fs::metadata(a), std::fs::metadata(b)) else {
        return resolved(a).is_some() && resolved(a) == resolved(b);
    };
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        if ma.dev() == mb.dev() && ma.ino() == mb.ino() {
            return true;
        }
    }
    let _ = (ma, mb);
    matches!(
        (std::fs::canonicalize(a), std::fs::canonicalize(b)),
        (Ok(ca), Ok(cb)) if ca == cb
    )
}

impl OutputFile {
    /// Opens `target` for writing after checking it against `inputs`.
    ///
    /// Returns the guard (commit it when the content is complete) and the file to write.
    pub fn create(target: &Path, inputs: &[&Path]) -> Result<(Self, File)> {
        check_not_input(target, inputs)?;
        let io = |e| Error::io(target, e);
        let kind = match std::fs::symlink_metadata(target) {
            Ok(m) if m.file_type().is_symlink() => match std::fs::metadata(target) {
                Ok(followed) if followed.is_dir() => {
                    return Err(Error::file(target, "is a directory"));
                }
                _ => OutputKind::Direct,
            },
            Ok(m) if m.is_dir() => return Err(Error::file(target, "is a directory")),
            Ok(m) if !m.is_file() => OutputKind::Direct,
            _ => OutputKind::Replace,
        };
        match kind {
            OutputKind::Direct => {
                let file = OpenOptions::new()
                    .write(true)
                    .create(true)
                    .truncate(is_regular(target))
                    .open(target)
                    .map_err(io)?;
                let guard = OutputFile {
                    target: target.to_path_buf(),
                    temp: None,
                    kind,
                };
                Ok((guard, file))
            }
            OutputKind::Replace => {
                let temp = temp_path(target);
                let file = OpenOptions::new()
                    .write(true)
                    .create_new(true)
                    .open(&temp)
                    .map_err(io)?;
                let guard = OutputFile {
                    target: target.to_path_buf(),
                    temp: Some(temp),
                    kind,
                };
                Ok((guard, file))
            }
        }
    }

    /// How the target is reached.
    pub fn kind(&self) -> OutputKind {
        self.kind
    }

    /// The file named by the user.
    pub fn target(&self) -> &Path {
        &self.target
    }

    /// Puts the finished content in place (renames the temporary file over the target).
    pub fn commit(mut self) -> Result<()> {
        if let Some(temp) = self.temp.take() {
            if let Err(e) = std::fs::rename(&temp, &self.target) {
                let _ = std::fs::remove_file(&temp);
                return Err(Error::io(&self.target, e));
            }
        }
        Ok(())
    }
}

impl Drop for OutputFile {
    fn drop(&mut self) {
        if let Some(temp) = self.temp.take() {
            let _ = std::fs::remove_file(temp);
        }
    }
}

/// Writes `bytes` to `target` safely (checked against `inputs`, temporary file, rename).
pub fn write_file(target: &Path, inputs: &[&Path], bytes: &[u8]) -> Result<()> {
    let (guard, mut file) = OutputFile::create(target, inputs)?;
    file.write_all(bytes)
        .and_then(|()| file.flush())
        .map_err(|e| Error::io(target, e))?;
    drop(file);
    guard.commit()
}

/// Moves a finished `temp` file (made by the caller beside `target`) into place: renamed over
/// a regular file or a new name, copied into a device node, FIFO or symlink target.
pub fn put_in_place(temp: &Path, target: &Path) -> Result<()> {
    let direct = match std::fs::symlink_metadata(target) {
        Ok(m) => m.file_type().is_symlink() || !m.is_file(),
        Err(_) => false,
    };
    let outcome = if direct {
        std::fs::read(temp)
            .map_err(|e| Error::io(temp, e))
            .and_then(|bytes| {
                OpenOptions::new()
                    .write(true)
                    .truncate(is_regular(target))
                    .open(target)
                    .and_then(|mut f| f.write_all(&bytes))
                    .map_err(|e| Error::io(target, e))
            })
    } else {
        std::fs::rename(temp, target).map_err(|e| Error::io(target, e))
    };
    let _ = std::fs::remove_file(temp);
    outcome
}

/// The path with its folder made canonical (the file itself need not exist).
fn resolved(path: &Path) -> Option<PathBuf> {
    if let Ok(full) = std::fs::canonicalize(path) {
        return Some(full);
    }
    let name = path.file_name()?;
    let parent = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    Some(std::fs::canonicalize(parent).ok()?.join(name))
}

fn is_regular(path: &Path) -> bool {
    std::fs::metadata(path).is_ok_and(|m| m.is_file())
}

/// `.NAME.amrx-PID.tmp` beside `target`.
pub fn temp_path(target: &Path) -> PathBuf {
    let name = target
        .file_name()
        .map_or_else(|| "out".into(), |n| n.to_string_lossy().into_owned());
    target.with_file_name(format!(".{name}.amrx-{}.tmp", std::process::id()))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A test folder, removed with all it holds when dropped.
    struct Scratch(PathBuf);

    impl std::ops::Deref for Scratch {
        type Target = PathBuf;
        fn deref(&self) -> &PathBuf {
            &self.0
        }
    }

    impl AsRef<Path> for Scratch {
        fn as_ref(&self) -> &Path {
            &self.0
        }
    }

    impl Drop for Scratch {
        fn drop(&mut self) {
            let _ = std::fs::remove_dir_all(&self.0);
        }
    }

    fn dir(name: &str) -> Scratch {
        let d = std::env::temp_dir().join(format!("amrx-output-{name}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&d);
        std::fs::create_dir_all(&d).unwrap();
        Scratch(d)
    }

    #[test]
    fn refuses_the_input_by_path_and_by_identity() {
        let d = dir("same");
        let input = d.join("in.wav");
        std::fs::write(&input, b"precious").unwrap();
        assert!(OutputFile::create(&input, &[&input]).is_err());
        // Another spelling of the same path.
        let dotted = d.join(".").join("in.wav");
        assert!(OutputFile::create(&dotted, &[&input]).is_err());
        // A hard link: another name, the same inode.
        let link = d.join("hard.wav");
        std::fs::hard_link(&input, &link).unwrap();
        let err = OutputFile::create(&link, &[&input]).unwrap_err();
        assert!(err.to_string().contains("refusing to write over the input"));
        assert_eq!(std::fs::read(&input).unwrap(), b"precious");
        // Two outputs with the same name that does not exist yet.
        let new = d.join("new.wav");
        assert!(check_not_input(&d.join(".").join("new.wav"), &[&new]).is_err());
        assert!(check_not_input(&d.join("other.wav"), &[&new]).is_ok());
    }

    #[test]
    fn uncommitted_output_leaves_the_target_untouched() {
        let d = dir("uncommitted");
        let target = d.join("out.csv");
        std::fs::write(&target, b"old").unwrap();
        {
            let (_guard, mut f) = OutputFile::create(&target, &[]).unwrap();
            f.write_all(b"half").unwrap();
        }
        assert_eq!(std::fs::read(&target).unwrap(), b"old");
        assert_eq!(std::fs::read_dir(&d).unwrap().count(), 1, "temp removed");
        write_file(&target, &[], b"new").unwrap();
        assert_eq!(std::fs::read(&target).unwrap(), b"new");
    }

    #[cfg(unix)]
    #[test]
    fn symlinks_and_devices_are_written_through_not_replaced() {
        let d = dir("links");
        let real = d.join("real.csv");
        std::fs::write(&real, b"old").unwrap();
        let link = d.join("link.csv");
        std::os::unix::fs::symlink(&real, &link).unwrap();
        write_file(&link, &[], b"new").unwrap();
        assert!(std::fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink());
        assert_eq!(std::fs::read(&real).unwrap(), b"new");
        // A character device stays a device.
        let null = Path::new("/dev/null");
        write_file(null, &[], b"x").unwrap();
        let temp = d.join(".x.tmp");
        std::fs::write(&temp, b"y").unwrap();
        put_in_place(&temp, null).unwrap();
        assert!(!std::fs::metadata(null).unwrap().is_file());
        assert!(!temp.exists());
    }
}
