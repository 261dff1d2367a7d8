//! The core's image loader on hostile input: random bytes and random mutations of valid
//! images are refused with an error or accepted as a valid network, never a panic.
use proptest::prelude::*;
use std::path::Path;
use std::sync::OnceLock;
use tidewire_core::image::{decode, header, ImageError, HEADER_LEN};
use tidewire_core::{Narrow, Solver, Wide};
use tidewire_host::analysis::prepare;
use tidewire_host::compile::ProfileKind;
use tidewire_host::emit::image_bytes;

/// Images of three demo plants, compiled once for the whole test binary (compiling them
/// runs the twin and the host core; doing it per proptest case cost most of this file's
/// run time).
fn demo_images() -> &'static [Vec<u8>] {
    static IMAGES: OnceLock<Vec<Vec<u8>>> = OnceLock::new();
    IMAGES.get_or_init(|| {
        let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants");
        ["bench-rig.toml", "irrigation-network.toml", "packaging-line.toml"]
            .iter()
            .map(|n| {
                let p = dir.join(n);
                let plant = tidewire_host::plant::load_plant(&p).unwrap();
                image_bytes(&prepare(&plant, n, ProfileKind::Wide).unwrap().0.network())
            })
            .collect()
    })
}

/// Cases per property: 512 in the normal suite, `PROPTEST_CASES` when set (the soak
/// command sets it).
fn cases() -> u32 {
    std::env::var("PROPTEST_CASES").ok().and_then(|v| v.parse().ok()).unwrap_or(512)
}

fn load_all(bytes: &[u8]) {
    let mut w: Box<Solver<Wide, 128, 64, 8192>> = Box::new(Solver::new());
    let _ = w.load_image(bytes);
    let mut n: Box<Solver<Narrow, 128, 64, 8192>> = Box::new(Solver::new());
    let _ = n.load_image(bytes);
    w.step(1000);
    n.step(1000);
}

#[test]
fn valid_images_load_and_damage_is_named() {
    let imgs = demo_images();
    let img = &imgs[0];
    let mut s: Box<Solver<Wide, 128, 64, 8192>> = Box::new(Solver::new());
    s.load_image(img).unwrap();
    assert_eq!(s.load_image(&img[..10]), Err(ImageError::Truncated { len: 10 }));
    let mut bad = img.clone();
    bad[0] = b'X';
    assert_eq!(s.load_image(&bad), Err(ImageError::BadMagic));
    let mut bad = img.clone();
    bad[4] = 9;
    assert_eq!(s.load_image(&bad), Err(ImageError::UnsupportedVersion { found: 9 }));
    let mut bad = img.clone();
    let last = bad.len() - 1;
    bad[last] ^= 0x55;
    assert!(matches!(s.load_image(&bad), Err(ImageError::CrcMismatch { .. })));
    let bad = &img[..img.len() - 1];
    assert!(matches!(s.load_image(bad), Err(ImageError::LengthMismatch { .. })));
    // A valid body with one extra byte after it (resealed, so the CRC passes): refused as
    // trailing bytes, not decoded.
    let mut body = img[HEADER_LEN..].to_vec();
    body.push(0);
    let mut with_trailer = header(&body).to_vec();
    with_trailer.extend_from_slice(&body);
    assert_eq!(s.load_image(&with_trailer), Err(ImageError::TrailingBytes));
    // Over capacity: the big plant does not fit a tiny solver.
    let mut tiny: Solver<Wide, 4, 4, 16> = Solver::new();
    assert!(tiny.load_image(&imgs[2]).is_err());
    assert!(decode::<2, 2>(&imgs[2]).is_err());
}

/// Rewrite the header so that a mutated body passes the CRC and reaches the decoder.
fn reseal(img: &[u8]) -> Vec<u8> {
    let body = img.get(HEADER_LEN..).unwrap_or(&[]);
    let mut out = header(body).to_vec();
    out.extend_from_slice(body);
    out
}

proptest! {
    #![proptest_config(ProptestConfig { cases: cases(), ..ProptestConfig::default() })]

    #[test]
    fn random_bytes_never_panic(bytes in proptest::collection::vec(any::<u8>(), 0..600)) {
        load_all(&bytes);
        load_all(&reseal(&bytes));
    }

    #[test]
    fn mutated_images_never_panic(
        which in 0usize..3,
        edits in proptest::collection::vec((any::<prop::sample::Index>(), any::<u8>()), 1..8),
        cut in any::<prop::sample::Index>(),
    ) {
        let imgs = demo_images();
        let mut img = imgs[which].clone();
        for (i, v) in edits {
            let k = i.index(img.len());
            img[k] = v;
        }
        load_all(&img);
        // Same damage behind a valid CRC, so the body decoder and the validator see it.
        let sealed = reseal(&img);
        load_all(&sealed);
        load_all(&sealed[..cut.index(sealed.len())]);
    }
}
