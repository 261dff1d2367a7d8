//! Plants that parse but that the core would refuse after compilation: the compiler runs the
//! core's own load checks and refuses them with a located error (exit 2, nothing written).

use std::path::Path;
use tidewire_host::compile::{compile, ProfileKind};
use tidewire_host::plant::load_plant;

/// Sixteen 3 mΩ cables at one node driven through 4 MΩ: the weight sum used to overflow u64
/// in the core (a CRC-valid image of it panicked in debug builds and ran an active junction in
/// release builds, 3.4 V where the f64 twin shows 60 nV). Now the source weight is seen to
/// vanish at the weight unit the cables allow, and the node is named.
#[test]
fn weight_range_reproducer_is_refused_at_the_node() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/compile_refusals/weight-range.toml");
    let plant = load_plant(&path).expect("the plant file itself is valid");
    for profile in [ProfileKind::Wide, ProfileKind::Narrow] {
        let e = match compile(&plant, "weight-range.toml", profile) {
            Ok(_) => panic!("{profile:?}: the compiler must refuse this plant"),
            Err(e) => e,
        };
        assert_eq!((e.line, e.column, e.field.as_str()), (14, 7, "node.hub"), "{e}");
        assert!(e.message.contains("integer weights") && e.message.contains("junction 0"), "{e}");
        assert!(e.hint.contains("closer together"), "{e}");
        assert_eq!(e.exit_code(), 2);
    }
    let out = std::env::temp_dir().join(format!("tidewire-weight-range-{}.bin", std::process::id()));
    let _ = std::fs::remove_file(&out);
    for args in [
        vec!["inspect", path.to_str().unwrap()],
        vec!["compile", path.to_str().unwrap(), "--image", out.to_str().unwrap()],
    ] {
        let o = std::process::Command::new(env!("CARGO_BIN_EXE_tidewire")).args(&args).output().unwrap();
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {err}");
        assert!(err.contains("weight-range.toml:14:7") && !err.contains("panicked"), "{err}");
    }
    assert!(!out.exists(), "nothing written");
}
