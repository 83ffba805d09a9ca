#![allow(dead_code)]
// Shared by the targets that need files: a scratch folder per process in the RAM disk when
// there is one.
use amrx::io::IqSource;
use amrx::Complex32;
use std::path::PathBuf;

pub fn scratch() -> PathBuf {
    let base = if std::path::Path::new("/dev/shm").is_dir() {
        PathBuf::from("/dev/shm")
    } else {
        std::env::temp_dir()
    };
    let dir = base.join(format!("amrx-fuzz-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// Reads a source to its end with changing buffer sizes; every sample must be finite (the
/// `IqSource` contract) and a source never yields more than it announced.
pub fn drain(source: &mut dyn IqSource, sizes: &[u8]) {
    let mut buf = vec![Complex32::default(); 4096];
    let announced = source.info().total_samples;
    let mut total = 0u64;
    for i in 0.. {
        let size = 1 + usize::from(sizes.get(i % sizes.len().max(1)).copied().unwrap_or(255)) * 16;
        let n = match source.read(&mut buf[..size.min(4096)]) {
            Ok(0) | Err(_) => break,
            Ok(n) => n,
        };
        assert!(buf[..n].iter().all(|z| z.re.is_finite() && z.im.is_finite()));
        total += n as u64;
    }
    if let Some(announced) = announced {
        assert!(total <= announced, "read {total} of {announced} announced");
    }
    let _ = source.warnings();
}
