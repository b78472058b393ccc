//! The model file hash (`Design::model_hash`) is SHA-256, checked against
//! published test vectors and an outside tool.

use lookout_design::design::model_hash;
use lookout_design::design_text;

/// NIST FIPS 180-2, Appendix B.1 ("abc", one block) and B.2 (the 448-bit
/// message, two blocks): the published SHA-256 digests (values from memory,
/// matching Python's `hashlib.sha256` and coreutils `sha256sum`).
#[test]
fn sha256_matches_the_fips_180_2_examples() {
    assert_eq!(
        model_hash(b"abc"),
        "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
    );
    assert_eq!(
        model_hash(b"abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq"),
        "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1"
    );
}

/// A design's `model_hash` is the SHA-256 of the model file's bytes, as
/// `sha256sum` prints it for a file holding exactly `MODEL` (computed with
/// coreutils sha256sum 9.x and Python's hashlib, which agree).
#[test]
fn design_hash_is_the_sha256_of_the_model_bytes() {
    const MODEL: &str = "name = \"hash_check\"\nsample_period = 0.01\n\n[plant]\n\
        a = [[-1.0]]\nb = [[1.0]]\nc = [[1.0]]\n\n[observer]\nform = \"predictor\"\n\
        discrete_poles = [0.5]\n";
    let design = design_text(MODEL, "hash_check.toml").unwrap();
    assert_eq!(
        design.model_hash,
        "c8deba3dca5d16d3692962a57ef75974d9efc8181d803de0a3ce38cefdd20acd"
    );
    // A one-byte change gives another hash.
    let other = design_text(&MODEL.replace("0.5", "0.4"), "hash_check.toml").unwrap();
    assert_ne!(other.model_hash, design.model_hash);
}
