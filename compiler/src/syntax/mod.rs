//! Tokens to syntax tree. One parser serves the macro (a `proc_macro2::TokenStream`
//! handed over by rustc) and the CLI (a file tokenized by `proc_macro2`, whose spans
//! carry line and column).

pub mod ast;
mod fast;
pub mod format;
mod lexicon;
pub mod parse;
pub mod print;

/// The parser's fast-path switch, for tests comparing the paths (feature `testing`).
#[cfg(any(test, feature = "testing"))]
pub use fast::FastPath;
#[cfg(not(any(test, feature = "testing")))]
use fast::FastPath;
pub use lexicon::{MAX_NESTING, MAX_TERMS, RESERVED};
pub use parse::parse_tokens;

use proc_macro2::{Span, TokenStream};

/// Largest spec file the tool reads (LANGUAGE.md, "Limits").
pub const MAX_FILE_BYTES: u64 = 64 * 1024 * 1024;

/// A syntax error: a message at a span.
#[derive(Clone, Debug)]
pub struct SyntaxError {
    /// What is wrong.
    pub message: String,
    /// Where.
    pub span: Span,
}

impl From<syn::Error> for SyntaxError {
    fn from(e: syn::Error) -> Self {
        SyntaxError {
            message: e.to_string(),
            span: e.span(),
        }
    }
}

/// Tokenizes spec text as Rust tokens (with line/column spans) and parses it.
pub fn parse_source(text: &str) -> Result<ast::File, SyntaxError> {
    parse_source_in(text, FastPath::Auto)
}

/// [`parse_source`] with a choice of fast path, for tests comparing the paths (feature
/// `testing`).
#[cfg(any(test, feature = "testing"))]
pub fn parse_source_with(text: &str, fast: FastPath) -> Result<ast::File, SyntaxError> {
    parse_source_in(text, fast)
}

fn parse_source_in(text: &str, fast: FastPath) -> Result<ast::File, SyntaxError> {
    if text.len() as u64 > MAX_FILE_BYTES {
        return Err(SyntaxError {
            message: format!(
                "the spec is {} bytes; the limit is {} bytes (64 MiB)",
                text.len(),
                MAX_FILE_BYTES
            ),
            span: Span::call_site(),
        });
    }
    let tokens: TokenStream = text
        .parse()
        .map_err(|e: proc_macro2::LexError| SyntaxError {
            message: format!("cannot tokenize: {e}"),
            span: e.span(),
        })?;
    Ok(parse::parse_tokens_of_text(tokens, text, fast)?)
}

/// Parses one guard (`property` false: inputs, `!`, `&&`, `||`, parentheses, `true`,
/// `false`) or one `never` property (`property` true: also outputs, actions and
/// `in STATE`) written as text on its own: the grammar of a spec, for expressions that
/// stand alone (`detent import` reads the state table's guard fields with it).
pub fn parse_expr_text(text: &str, property: bool) -> Result<ast::Expr, SyntaxError> {
    let tokens: TokenStream = text
        .parse()
        .map_err(|e: proc_macro2::LexError| SyntaxError {
            message: format!("cannot tokenize: {e}"),
            span: e.span(),
        })?;
    Ok(parse::parse_expr_tokens(tokens, property)?)
}
