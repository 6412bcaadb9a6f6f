//! Share links: a whole [`Project`] packed into a URL fragment (`#v1.…`), so a design can be passed on without any
//! server. Pure and fuzzable: [`encode`] never fails, [`decode`] treats its input as hostile.
//!
//! # Format, version 1
//!
//! ```text
//! v1.<payload>
//! payload = base64url, no padding (RFC 4648 §5), of
//!           zlib (RFC 1950: 2-byte header, raw deflate RFC 1951, Adler-32 trailer), of
//!           the project as compact JSON (the same schema as the project file, `"schema"` number)
//! ```
//!
//! The version comes first so a decoder knows what follows before it reads anything else. Anyone can decode a
//! link with a standard library alone, e.g. Python:
//! `json.loads(zlib.decompress(base64.urlsafe_b64decode(p + "=" * (-len(p) % 4))))`
//! (tests/python/test_share_notes.py does exactly that as an outside check of the format).
//! The Adler-32 trailer catches most damage that still decodes as deflate (a flipped character, a cut-off end).
//!
//! # Untrusted input
//!
//! [`decode`] caps the link length ([`MAX_LINK_CHARS`]) before decoding anything, inflates with a hard output
//! limit ([`MAX_DECODED_BYTES`], so a small "decompression bomb" cannot grow into a large allocation), requires
//! canonical base64url and that the zlib stream ends exactly at the end of the data, and then reads the JSON
//! with [`Project::from_json`], which rejects unknown fields and checks the bounds of every field.
//!
//! # Migrations
//!
//! Two kinds of change are planned for, and old links must keep decoding forever (the golden links in
//! `tests/fixtures/*.link` are tested for that):
//!
//! * **Project schema changes** (a new field, a renamed field): the payload JSON carries its own `"schema"`
//!   number and [`Project::from_json`] migrates older schemas on read, so the link format stays `v1` and nothing
//!   changes here. Add the migration in `project.rs` and keep the v1 golden links passing.
//! * **Link format changes** (another compression, a binary encoding, a preset dictionary): bump
//!   [`LINK_VERSION`], add a `decode_v2` beside [`decode_v1`] and a match arm in [`decode`], and keep `decode_v1`
//!   unchanged. [`encode`] always writes the newest version.
//!
//! Only the decoded project is compared in tests: the exact link text of a project may change when the
//! compressor changes (it is deterministic for one build), but every link ever written must decode to the same
//! project.

use crate::base::error::Error;
use crate::design::project::Project;
use base64::engine::general_purpose::URL_SAFE_NO_PAD;
use base64::Engine as _;
use miniz_oxide::inflate::core::{decompress, inflate_flags, DecompressorOxide};
use miniz_oxide::inflate::TINFLStatus;
use std::fmt;

/// The link format this build writes.
pub const LINK_VERSION: u32 = 1;
/// The longest link [`decode`] accepts, characters (after an optional `…#` prefix is stripped). Far above a
/// realistic project (about 1 000 characters for eight layers and ten rules), below what browsers handle in a URL.
pub const MAX_LINK_CHARS: usize = 32 * 1024;
/// The most bytes the payload may inflate to. A full project with the maximum number of layers and rules stays
/// well below this; deflate can expand about 1 000-fold, so without this cap a 32 KiB link could claim 32 MiB.
pub const MAX_DECODED_BYTES: usize = 512 * 1024;
/// The zlib compression level used by [`encode`] (miniz_oxide's highest, 10).
const LEVEL: u8 = 10;

/// Why a share link could not be read. `Display` is lower-case, no trailing period, and says what to do.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum ShareError {
    /// Nothing after trimming (or after the `#`).
    Empty,
    /// The text does not start with `v<number>.`.
    NotALink,
    /// A version this build cannot read.
    UnsupportedVersion { found: String, supported: u32 },
    /// The link is longer than [`MAX_LINK_CHARS`].
    TooLong { chars: usize, max: usize },
    /// A character outside the base64url alphabet.
    NotBase64 { position: usize, character: char },
    /// The data ends early (characters missing at the end).
    Truncated,
    /// The payload inflates to more than [`MAX_DECODED_BYTES`].
    TooLarge { max: usize },
    /// The bytes are not a valid zlib stream, the checksum fails, or the text is not UTF-8.
    Corrupt { detail: String },
    /// The data decoded, but the project is not valid; the message names the field.
    InvalidProject(Error),
}

impl fmt::Display for ShareError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ShareError::Empty => write!(f, "share link: the link is empty"),
            ShareError::NotALink => write!(
                f,
                "share link: not an ohmstack link (it should start with \"v{LINK_VERSION}.\")"
            ),
            ShareError::UnsupportedVersion { found, supported } => write!(
                f,
                "share link: version {found} is not known to this version of ohmstack (it reads version {supported}); \
                 open it with a newer version"
            ),
            ShareError::TooLong { chars, max } => write!(
                f,
                "share link: too long ({chars} characters, at most {max} are accepted)"
            ),
            ShareError::NotBase64 { position, character } => write!(
                f,
                "share link: not base64url: character {character:?} at position {position} (was the link edited?)"
            ),
            ShareError::Truncated => write!(
                f,
                "share link: truncated (characters are missing at the end; copy the whole link)"
            ),
            ShareError::TooLarge { max } => write!(
                f,
                "share link: too large (the data expands to more than {max} bytes)"
            ),
            ShareError::Corrupt { detail } => write!(f, "share link: corrupt data ({detail})"),
            ShareError::InvalidProject(e) => write!(f, "share link: invalid project: {e}"),
        }
    }
}

impl std::error::Error for ShareError {}

/// Packs `project` into a link fragment, `v1.<base64url>` (no `#`). Deterministic for one build.
pub fn encode(project: &Project) -> String {
    let json = serde_json::to_string(project).expect("a project always serialises");
    let packed = miniz_oxide::deflate::compress_to_vec_zlib(json.as_bytes(), LEVEL);
    format!("v{LINK_VERSION}.{}", URL_SAFE_NO_PAD.encode(packed))
}

/// Reads a link back into a project. Accepts the bare fragment (`v1.…`), the fragment with its `#`, or a whole
/// URL (everything up to the last `#` is ignored); surrounding whitespace is ignored, nothing else is forgiven.
pub fn decode(link: &str) -> Result<Project, ShareError> {
    decode_noting(link).map(|(project, _)| project)
}

/// [`decode`], also returning what reading an older schema changed, in the user's words
/// ([`Project::from_json_noting`]): the app says it when an old link opens.
pub fn decode_noting(link: &str) -> Result<(Project, Vec<String>), ShareError> {
    let text = link.trim();
    let text = match text.rfind('#') {
        Some(i) => &text[i + 1..],
        None => text,
    };
    if text.is_empty() {
        return Err(ShareError::Empty);
    }
    // The length cap comes before any decoding work.
    let chars = text.chars().count();
    if text.len() > MAX_LINK_CHARS {
        return Err(ShareError::TooLong {
            chars,
            max: MAX_LINK_CHARS,
        });
    }
    let Some((version, payload)) = text.split_once('.') else {
        return Err(ShareError::NotALink);
    };
    let Some(number) = version.strip_prefix('v') else {
        return Err(ShareError::NotALink);
    };
    if number.is_empty() || !number.bytes().all(|b| b.is_ascii_digit()) {
        return Err(ShareError::NotALink);
    }
    // Exact text, so `v01.` is not taken for `v1.`.
    match number {
        "1" => decode_v1_noting(payload),
        _ => Err(ShareError::UnsupportedVersion {
            found: number.chars().take(12).collect(),
            supported: LINK_VERSION,
        }),
    }
}

/// Decodes a version-1 payload (the text after `v1.`). Kept unchanged forever once a later version exists.
pub fn decode_v1(payload: &str) -> Result<Project, ShareError> {
    decode_v1_noting(payload).map(|(project, _)| project)
}

fn decode_v1_noting(payload: &str) -> Result<(Project, Vec<String>), ShareError> {
    if payload.is_empty() {
        return Err(ShareError::Truncated);
    }
    if payload.len() > MAX_LINK_CHARS {
        return Err(ShareError::TooLong {
            chars: payload.chars().count(),
            max: MAX_LINK_CHARS,
        });
    }
    // Report a foreign character by its character position, before the decoder sees it.
    if let Some((position, character)) = payload
        .chars()
        .enumerate()
        .find(|&(_, c)| !(c.is_ascii_alphanumeric() || c == '-' || c == '_'))
    {
        return Err(ShareError::NotBase64 {
            position: position + version_prefix_len(),
            character,
        });
    }
    let bytes = URL_SAFE_NO_PAD.decode(payload).map_err(|e| match e {
        // With only alphabet characters left, a bad length or non-zero spare bits in the last character mean
        // the end of the link is missing or damaged.
        base64::DecodeError::InvalidLength(_) | base64::DecodeError::InvalidLastSymbol(..) => {
            ShareError::Truncated
        }
        other => ShareError::Corrupt {
            detail: other.to_string().to_lowercase(),
        },
    })?;
    let json = inflate_limited(&bytes, MAX_DECODED_BYTES)?;
    let text = std::str::from_utf8(&json).map_err(|_| ShareError::Corrupt {
        detail: "the data is not UTF-8 text".into(),
    })?;
    Project::from_json_noting(text).map_err(ShareError::InvalidProject)
}

fn version_prefix_len() -> usize {
    format!("v{LINK_VERSION}.").len()
}

/// Inflates a zlib stream into at most `limit` bytes; the stream must end exactly at the end of `input`.
fn inflate_limited(input: &[u8], limit: usize) -> Result<Vec<u8>, ShareError> {
    let flags = inflate_flags::TINFL_FLAG_PARSE_ZLIB_HEADER
        | inflate_flags::TINFL_FLAG_USING_NON_WRAPPING_OUTPUT_BUF;
    // Start small and double, so a short link never allocates the whole limit.
    let mut out: Vec<u8> = vec![0; input.len().saturating_mul(4).clamp(64, limit.max(64))];
    let mut decomp = Box::<DecompressorOxide>::default();
    let (mut in_pos, mut out_pos) = (0usize, 0usize);
    // Each round either finishes or doubles the buffer, so log2(limit) + a few rounds suffice.
    for _ in 0..64 {
        let (status, consumed, written) =
            decompress(&mut decomp, &input[in_pos..], &mut out, out_pos, flags);
        in_pos = (in_pos + consumed).min(input.len());
        out_pos += written;
        match status {
            TINFLStatus::Done => {
                if in_pos != input.len() {
                    return Err(ShareError::Corrupt {
                        detail: format!("{} stray bytes after the data", input.len() - in_pos),
                    });
                }
                out.truncate(out_pos);
                return Ok(out);
            }
            TINFLStatus::HasMoreOutput => {
                if out.len() >= limit {
                    return Err(ShareError::TooLarge { max: limit });
                }
                let grown = out.len().saturating_mul(2).min(limit);
                out.resize(grown, 0);
            }
            TINFLStatus::NeedsMoreInput | TINFLStatus::FailedCannotMakeProgress => {
                return Err(ShareError::Truncated)
            }
            TINFLStatus::Adler32Mismatch => {
                return Err(ShareError::Corrupt {
                    detail: "checksum mismatch".into(),
                })
            }
            _ => {
                return Err(ShareError::Corrupt {
                    detail: "not a valid compressed stream".into(),
                })
            }
        }
    }
    Err(ShareError::Corrupt {
        detail: "decompression did not finish".into(),
    })
}

#[cfg(test)]
mod tests {
    #[test]
    fn an_old_link_says_its_rules_are_now_field_solved() {
        // The golden demo link was written with schema 1, when a rule without a model was a closed-form rule.
        let link = include_str!("../../../tests/fixtures/demo.link");
        let (project, notes) = super::decode_noting(link).unwrap();
        assert_eq!(notes.len(), 1, "{notes:?}");
        assert!(notes[0].contains("field engine"), "{notes:?}");
        // A fresh link has nothing to say.
        let fresh = super::encode(&project);
        assert!(super::decode_noting(&fresh).unwrap().1.is_empty());
    }

    use super::*;
    use proptest::prelude::*;

    fn fixture() -> Project {
        Project::from_json(include_str!(
            "../../../tests/fixtures/eight_layer_ten_rules.json"
        ))
        .unwrap()
    }

    fn payload_of(project: &Project) -> Vec<u8> {
        let link = encode(project);
        URL_SAFE_NO_PAD.decode(&link[3..]).unwrap()
    }

    fn link_of(bytes: &[u8]) -> String {
        format!("v1.{}", URL_SAFE_NO_PAD.encode(bytes))
    }

    #[test]
    fn demo_and_fixture_round_trip_exactly() {
        for p in [crate::design::demo::project(), fixture()] {
            let link = encode(&p);
            let back = decode(&link).unwrap();
            assert_eq!(back, p);
            // Bit-identical floats, not just equal within round-off.
            assert_eq!(
                serde_json::to_string(&back).unwrap(),
                serde_json::to_string(&p).unwrap()
            );
        }
    }

    #[test]
    fn eight_layer_ten_rule_link_is_short() {
        let p = fixture();
        assert_eq!(p.stackup.copper_count(), 8);
        assert_eq!(p.rules.len(), 10);
        let n = encode(&p).len();
        // Requirement: well under 2 000 characters so the link survives chat tools and old browsers.
        assert!(n < 1500, "fixture link is {n} characters");
    }

    #[test]
    fn golden_links_decode_forever() {
        // Written once with `ohmstack share encode FILE > FILE.link` (see tests/fixtures/README.md); they must keep
        // decoding to the same project whatever changes in the encoder.
        // The demo evolves; the project the demo link was made from is frozen beside it as demo_v1.json.
        let demo = decode(include_str!("../../../tests/fixtures/demo.link")).unwrap();
        let frozen =
            Project::from_json(include_str!("../../../tests/fixtures/demo_v1.json")).unwrap();
        assert_eq!(demo, frozen);
        let eight = decode(include_str!(
            "../../../tests/fixtures/eight_layer_ten_rules.link"
        ))
        .unwrap();
        assert_eq!(eight, fixture());
    }

    #[test]
    fn accepts_whole_urls_and_whitespace() {
        let p = crate::design::demo::project();
        let link = encode(&p);
        assert_eq!(
            decode(&format!("  https://example.org/app#{link}\n")).unwrap(),
            p
        );
        assert_eq!(decode(&format!("#{link}")).unwrap(), p);
    }

    #[test]
    fn empty_and_foreign_text_are_named() {
        assert_eq!(decode(""), Err(ShareError::Empty));
        assert_eq!(decode("https://example.org/#"), Err(ShareError::Empty));
        assert_eq!(decode("hello"), Err(ShareError::NotALink));
        assert_eq!(decode("x1.abc"), Err(ShareError::NotALink));
        assert_eq!(decode("v.abc"), Err(ShareError::NotALink));
        assert_eq!(decode("v1"), Err(ShareError::NotALink));
        assert_eq!(decode("v1."), Err(ShareError::Truncated));
    }

    #[test]
    fn wrong_version_is_named() {
        let link = encode(&crate::design::demo::project()).replacen("v1.", "v2.", 1);
        let e = decode(&link).unwrap_err();
        assert!(matches!(e, ShareError::UnsupportedVersion { ref found, .. } if found == "2"));
        assert!(e.to_string().contains("version 2"), "{e}");
        let huge = format!("v{}.abc", "9".repeat(40));
        assert!(matches!(
            decode(&huge),
            Err(ShareError::UnsupportedVersion { .. })
        ));
    }

    #[test]
    fn too_long_is_refused_before_decoding() {
        let link = format!("v1.{}", "A".repeat(MAX_LINK_CHARS));
        assert!(matches!(decode(&link), Err(ShareError::TooLong { .. })));
    }

    #[test]
    fn not_base64_names_the_character() {
        let mut link = encode(&crate::design::demo::project());
        link.insert(10, '+');
        let e = decode(&link).unwrap_err();
        assert_eq!(
            e,
            ShareError::NotBase64 {
                position: 10,
                character: '+'
            }
        );
        assert!(matches!(
            decode("v1.ab=c"),
            Err(ShareError::NotBase64 { .. })
        ));
        assert!(matches!(
            decode("v1.abc<script>"),
            Err(ShareError::NotBase64 { .. })
        ));
    }

    #[test]
    fn every_truncation_is_a_clean_error() {
        let link = encode(&crate::design::demo::project());
        for cut in 3..link.len() {
            match decode(&link[..cut]) {
                Err(ShareError::Truncated) | Err(ShareError::Corrupt { .. }) => {}
                other => panic!("cut at {cut}: {other:?}"),
            }
        }
        // Cutting a few characters is reported as truncation, not as generic corruption.
        assert_eq!(decode(&link[..link.len() - 7]), Err(ShareError::Truncated));
    }

    #[test]
    fn every_single_bit_flip_is_caught() {
        let bytes = payload_of(&crate::design::demo::project());
        let original = crate::design::demo::project();
        for i in 0..bytes.len() {
            for bit in 0..8 {
                let mut b = bytes.clone();
                b[i] ^= 1 << bit;
                // Either an error, or (should a flip land in a place deflate ignores) the same project.
                if let Ok(p) = decode(&link_of(&b)) {
                    assert_eq!(p, original, "byte {i} bit {bit}");
                }
            }
        }
    }

    #[test]
    fn decompression_bomb_is_refused() {
        // 4 MiB of spaces compresses to a few kilobytes: a small link that would inflate far past the limit.
        let bomb = vec![b' '; 4 << 20];
        let packed = miniz_oxide::deflate::compress_to_vec_zlib(&bomb, 10);
        let link = link_of(&packed);
        assert!(link.len() < MAX_LINK_CHARS, "{}", link.len());
        assert_eq!(
            decode(&link),
            Err(ShareError::TooLarge {
                max: MAX_DECODED_BYTES
            })
        );
    }

    #[test]
    fn trailing_bytes_and_bad_text_are_corrupt() {
        let mut bytes = payload_of(&crate::design::demo::project());
        bytes.push(0);
        assert!(matches!(
            decode(&link_of(&bytes)),
            Err(ShareError::Corrupt { .. })
        ));
        let not_utf8 = miniz_oxide::deflate::compress_to_vec_zlib(&[0xff, 0xfe, 0x00], 6);
        assert!(matches!(
            decode(&link_of(&not_utf8)),
            Err(ShareError::Corrupt { .. })
        ));
        let raw_deflate = miniz_oxide::deflate::compress_to_vec(b"{}", 6);
        assert!(matches!(
            decode(&link_of(&raw_deflate)),
            Err(ShareError::Corrupt { .. })
        ));
    }

    #[test]
    fn invalid_project_names_the_field() {
        let mut v: serde_json::Value =
            serde_json::from_str(&crate::design::demo::project().to_json()).unwrap();
        v["rules"][1]["width_m"] = serde_json::json!(-1.0);
        let packed = miniz_oxide::deflate::compress_to_vec_zlib(v.to_string().as_bytes(), 6);
        let e = decode(&link_of(&packed)).unwrap_err();
        assert!(matches!(e, ShareError::InvalidProject(_)));
        let text = e.to_string();
        assert!(
            text.contains("rules[1]") && text.contains("width"),
            "{text}"
        );
        v["rules"][1]["width_m"] = serde_json::json!("wide");
        let packed = miniz_oxide::deflate::compress_to_vec_zlib(v.to_string().as_bytes(), 6);
        let text = decode(&link_of(&packed)).unwrap_err().to_string();
        assert!(text.contains("rules[1].width_m"), "{text}");
    }

    #[test]
    fn messages_are_lower_case_without_period() {
        let errors = [
            ShareError::Empty,
            ShareError::NotALink,
            ShareError::Truncated,
            ShareError::TooLarge { max: 1 },
            ShareError::TooLong { chars: 2, max: 1 },
            ShareError::Corrupt { detail: "x".into() },
        ];
        for e in errors {
            let s = e.to_string();
            assert!(
                s.starts_with(char::is_lowercase) && !s.ends_with('.'),
                "{s}"
            );
        }
    }

    fn arb_project() -> impl Strategy<Value = Project> {
        // Perturb the fixture's numbers and names: any finite in-range float must survive bit-exactly.
        (
            "[ -~]{0,40}",
            1e-6f64..1e-3,
            1.0f64..20.0,
            20.0f64..200.0,
            0.0f64..50.0,
            any::<bool>(),
        )
            .prop_map(|(title, w, dk, target, tol, mask)| {
                let mut p = fixture();
                p.title = title;
                p.rules[0].width_m = w;
                p.rules[1].target_ohm = target;
                p.rules[2].tolerance_pct = tol;
                if let crate::design::stackup::Layer::Core(d) = &mut p.stackup.layers[4] {
                    d.dk = dk;
                }
                if !mask {
                    p.stackup.layers.remove(0);
                }
                p
            })
    }

    proptest! {
        #![proptest_config(ProptestConfig { cases: 64, ..ProptestConfig::default() })]

        #[test]
        fn random_text_never_panics(s in "\\PC{0,200}") {
            let _ = decode(&s);
            let _ = decode(&format!("v1.{s}"));
        }

        #[test]
        fn random_bytes_never_panic(b in proptest::collection::vec(any::<u8>(), 0..300)) {
            prop_assert!(decode(&link_of(&b)).is_err());
            let packed = miniz_oxide::deflate::compress_to_vec_zlib(&b, 6);
            prop_assert!(decode(&link_of(&packed)).is_err());
        }

        #[test]
        fn project_link_project_is_identity(p in arb_project()) {
            let back = decode(&encode(&p)).unwrap();
            prop_assert_eq!(serde_json::to_string(&back).unwrap(), serde_json::to_string(&p).unwrap());
            prop_assert_eq!(back, p);
        }
    }
}
