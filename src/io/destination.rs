//! Output paths checked before any work starts: the extension says a format amrx writes, and
//! the folder exists. Nothing is created here.

use crate::{Error, Result};
use std::path::Path;

/// Refuses `path` as an output for `what` (e.g. "audio") when its extension is not one of
/// `extensions` (compared without case), or when its folder does not exist. A path without an
/// extension (a device, a FIFO, a name of the user's choosing) is accepted as it is.
///
/// ```
/// use amrx::io::check_destination;
/// use std::path::Path;
/// assert!(check_destination(Path::new("night.wav"), &["wav"], "audio").is_ok());
/// let err = check_destination(Path::new("night.mp3"), &["wav"], "audio").unwrap_err();
/// assert!(err.to_string().contains("writes audio as .wav, not .mp3"));
/// ```
pub fn check_destination(path: &Path, extensions: &[&str], what: &str) -> Result<()> {
    if let Some(ext) = path.extension().map(|e| e.to_string_lossy()) {
        if !extensions
            .iter()
            .any(|allowed| ext.eq_ignore_ascii_case(allowed))
        {
            let list: Vec<String> = extensions.iter().map(|e| format!(".{e}")).collect();
            return Err(Error::file(
                path,
                format!(
                    "amrx writes {what} as {}, not .{ext}; name the file accordingly",
                    list.join(" or ")
                ),
            ));
        }
    }
    if let Some(folder) = path.parent().filter(|p| !p.as_os_str().is_empty()) {
        if !folder.is_dir() {
            return Err(Error::file(
                path,
                format!("the folder {} does not exist", folder.display()),
            ));
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn extensions_and_folders_are_checked_without_creating_anything() {
        assert!(check_destination(Path::new("a.WAV"), &["wav"], "audio").is_ok());
        assert!(check_destination(Path::new("noext"), &["wav"], "audio").is_ok());
        assert!(check_destination(Path::new("/dev/null"), &["wav"], "audio").is_ok());
        let err = check_destination(Path::new("plot.svg"), &["png"], "charts").unwrap_err();
        assert!(
            err.to_string().contains("charts as .png, not .svg"),
            "{err}"
        );
        let missing = Path::new("/nonexistent-amrx-folder/x.png");
        let err = check_destination(missing, &["png"], "charts").unwrap_err();
        assert!(
            err.to_string()
                .contains("the folder /nonexistent-amrx-folder does not exist"),
            "{err}"
        );
        assert!(!missing.exists());
    }
}
