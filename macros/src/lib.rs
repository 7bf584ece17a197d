//! Procedural macros for detent. Thin: parse, hand to `detent-compiler`, return tokens.
use proc_macro::TokenStream;

/// Expands one or more machine specs written inline.
#[proc_macro]
pub fn machine(input: TokenStream) -> TokenStream {
    let _ = input;
    TokenStream::new()
}
