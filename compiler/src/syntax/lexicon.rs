//! The words and limits both parsers (the syn parser in `parse.rs` and its fast path in
//! `fast.rs`) share: Rust keywords and the language's reserved words, which no name may
//! be, and the bounds on nesting and expression size that keep every later pass within
//! its stack. A module of its own, so that neither parser imports the other for them.

/// Deepest nesting of groups, or of parentheses and `!` in one expression, that the
/// parser accepts.
pub const MAX_NESTING: usize = 128;

/// Most operands (names and constants) one guard or property may have. Bounds the
/// depth of expression trees, so no later pass can overflow the stack on them.
pub const MAX_TERMS: usize = 1024;

/// Words with a fixed meaning in the language that cannot name a state, event,
/// input, output, action or group.
pub const RESERVED: &[&str] = &["stay", "preempt"];

/// Rust's strict and reserved keywords (2021 edition, plus `gen` reserved in 2024): a
/// name among them would not compile in generated code.
/// Sorted (byte order), for binary search.
const RUST_KEYWORDS: &[&str] = &[
    "Self", "abstract", "as", "async", "await", "become", "box", "break", "const", "continue",
    "crate", "do", "dyn", "else", "enum", "extern", "false", "final", "fn", "for", "gen", "if",
    "impl", "in", "let", "loop", "macro", "match", "mod", "move", "mut", "override", "priv", "pub",
    "ref", "return", "self", "static", "struct", "super", "trait", "true", "try", "type", "typeof",
    "unsafe", "unsized", "use", "virtual", "where", "while", "yield",
];

/// Whether `text` is one of [`RUST_KEYWORDS`]. Every keyword starts with a lowercase
/// letter (but `Self`) and has 2 to 8 bytes, which rules most names out before the
/// search.
pub(crate) fn is_rust_keyword(text: &str) -> bool {
    match text.as_bytes().first() {
        Some(b'a'..=b'z') if (2..=8).contains(&text.len()) => {
            RUST_KEYWORDS.binary_search(&text).is_ok()
        }
        Some(b'S') => text == "Self",
        _ => false,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rust_keywords_are_sorted_for_binary_search() {
        assert!(RUST_KEYWORDS.windows(2).all(|w| w[0] < w[1]));
        for k in RUST_KEYWORDS {
            assert!(RUST_KEYWORDS.binary_search(k).is_ok());
            assert!(is_rust_keyword(k), "{k}");
            assert!(!is_rust_keyword(&format!("{k}x")), "{k}x");
            assert!(!is_rust_keyword(&k.to_uppercase()), "{k}");
        }
        for name in ["a", "S0", "E1", "Selfish", "lamp", "r#fn", "_", ""] {
            assert!(!is_rust_keyword(name), "{name}");
        }
    }
}
