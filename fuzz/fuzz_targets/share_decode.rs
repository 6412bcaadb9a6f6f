//! Fuzz `share::decode` (untrusted URL fragments): arbitrary text, and arbitrary JSON packed as a well-formed v1
//! link so the fuzzer also reaches the project parser through the link path. Property: no panic, and a decoded
//! project re-encodes to a link that decodes to the same project.
#![no_main]

use base64::engine::general_purpose::URL_SAFE_NO_PAD;
use base64::Engine as _;
use libfuzzer_sys::fuzz_target;
use ohmstack_core::design::share;

fuzz_target!(|data: &[u8]| {
    let link = match data.split_first() {
        // A well-formed envelope around arbitrary bytes: exercises inflate output and JSON checks.
        Some((b, rest)) if b % 4 == 0 => {
            let packed = miniz_oxide::deflate::compress_to_vec_zlib(rest, 1);
            format!("v1.{}", URL_SAFE_NO_PAD.encode(packed))
        }
        _ => String::from_utf8_lossy(data).into_owned(),
    };
    if let Ok(project) = share::decode(&link) {
        let again = share::decode(&share::encode(&project)).expect("re-encoded link decodes");
        assert_eq!(again, project);
    }
});
