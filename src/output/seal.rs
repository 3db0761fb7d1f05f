//! Sealing generated files with their content hash, and checking a file
//! is as it was written. The lowest piece of output: the plan hashes its
//! inputs with it, rendering seals with it, the commands check with it.

use sha2::{Digest, Sha256};

/// Where the content hash goes; replaced by the real hash when sealed.
pub const MARKER_PLACEHOLDER: &str =
    "pwmplan-hash:0000000000000000000000000000000000000000000000000000000000000000";
const MARKER_PREFIX: &str = "pwmplan-hash:";

/// Hex SHA-256 of a text.
pub fn sha256_hex(text: &str) -> String {
    let digest = Sha256::digest(text.as_bytes());
    digest.iter().map(|b| format!("{b:02x}")).collect()
}

/// Replace the placeholder marker by the SHA-256 of the text that holds the
/// placeholder, so a reader can check the file was not edited.
pub fn seal(text: &str) -> String {
    let hash = sha256_hex(text);
    text.replacen(MARKER_PLACEHOLDER, &format!("{MARKER_PREFIX}{hash}"), 1)
}

/// Whether a generated file is as pwmplan wrote it: `None` when it carries
/// no marker (not a pwmplan file), else whether the hash matches.
pub fn is_untouched(text: &str) -> Option<bool> {
    let at = text.find(MARKER_PREFIX)?;
    let hex_start = at + MARKER_PREFIX.len();
    let hex = text.get(hex_start..hex_start + 64)?;
    if !hex.chars().all(|c| c.is_ascii_hexdigit()) {
        return Some(false);
    }
    let blank = format!(
        "{}{}{}",
        &text[..at],
        MARKER_PLACEHOLDER,
        &text[hex_start + 64..]
    );
    Some(sha256_hex(&blank) == hex)
}
