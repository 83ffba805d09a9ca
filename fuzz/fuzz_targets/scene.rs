//! Scene files: any text through `Scene::parse` (JSON, then every field's check); a scene
//! that parses and is short is generated in full, and its samples must be finite.
#![no_main]
use amrx::synth::scene::{Scene, SceneGenerator};
use amrx::Complex32;
use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let Ok(scene) = Scene::parse(text, Path::new("fuzz.json")) else {
        return;
    };
    // Generation is bounded: set-up costs grow with the scene (noise-message design), so only
    // short scenes at modest rates are generated here.
    if scene.total_samples() > 4096 || scene.sample_rate > 1e6 {
        return;
    }
    let Ok(mut generator) = SceneGenerator::new(&scene, Path::new(".")) else {
        return;
    };
    let mut buf = vec![Complex32::default(); 1024];
    while generator.remaining() > 0 {
        let n = generator.fill(&mut buf);
        if n == 0 {
            break;
        }
        assert!(buf[..n].iter().all(|z| z.re.is_finite() && z.im.is_finite()));
    }
});
