//! The two expansions: inline specs and spec files. Reading, parsing, resolution and
//! checking are `detent-compiler`'s driver (`detent_compiler::driver`, the same as the
//! CLI's), code generation its Rust back end; this file turns the diagnostics into
//! compile errors and warnings and places the generated items.

use detent_compiler::check::render::{self, Source};
use detent_compiler::diag::Diagnostic;
use detent_compiler::driver::{self, ReadError};
use detent_compiler::emit::rust;
use detent_compiler::syntax::ast::DispatchStyle;
use proc_macro2::{Span, TokenStream};
use quote::{format_ident, quote, quote_spanned};

/// `machine! { ... }`: every error-free machine becomes a module; every finding
/// becomes a compile error or warning at its token. Parsing, resolution and checking
/// are the driver's, as for the CLI.
pub fn inline(input: TokenStream) -> TokenStream {
    let reports = match driver::check_tokens(input) {
        Ok(reports) => reports,
        Err(e) => return e.to_compile_error(),
    };
    let mut out = TokenStream::new();
    for report in reports {
        let has_errors = report.diagnostics.iter().any(Diagnostic::is_error);
        for d in &report.diagnostics {
            out.extend(inline_diagnostic(d));
        }
        if let (Some(m), false) = (report.machine, has_errors) {
            out.extend(rust::machine_tokens(&m, m.dispatch));
        }
    }
    out
}

/// The headline and the `= note:` / `= help:` lines of a diagnostic. Related spans
/// ("the other rule") are notes of the same error, with their line and column: stable
/// Rust gives a procedural macro no secondary spans, and a second `compile_error!`
/// would count as an error of its own.
fn message_with_notes(d: &Diagnostic) -> String {
    let mut msg = format!("{} [detent::{}]", d.message, d.lint.name());
    for (span, label) in &d.related {
        let at = span.start();
        if at.line > 0 {
            msg.push_str(&format!(
                "\n= note: {label}: line {}, column {}",
                at.line,
                at.column + 1
            ));
        } else {
            msg.push_str(&format!(
                "\n= note: {label} (position unknown to this compiler)"
            ));
        }
    }
    for n in &d.notes {
        msg.push_str(&format!("\n= note: {n}"));
    }
    if let Some(trace) = &d.trace {
        msg.push_str(&format!("\n= note: {}", render::trace_note(trace)));
    }
    for h in &d.helps {
        msg.push_str(&format!("\n= help: {h}"));
    }
    msg
}

fn inline_diagnostic(d: &Diagnostic) -> TokenStream {
    let span = d.span.unwrap_or_else(Span::call_site);
    let msg = message_with_notes(d);
    if d.is_error() {
        syn::Error::new(span, msg).to_compile_error()
    } else {
        warning(span, d.lint.name(), &msg)
    }
}

/// A compiler warning at `span` on stable Rust: a deprecated constant, used at the
/// span, whose deprecation note is the message.
fn warning(span: Span, lint: &str, msg: &str) -> TokenStream {
    let name = format_ident!("{}", lint, span = span);
    quote_spanned! {span=>
        const _: () = {
            #[deprecated(note = #msg)]
            #[allow(non_upper_case_globals)]
            const #name: () = ();
            #name
        };
    }
}

/// Arguments of `#[machine_file(..)]`.
struct FileArgs {
    file: syn::LitStr,
    dispatch: Option<DispatchStyle>,
    machine: Option<syn::LitStr>,
}

fn parse_args(args: TokenStream) -> syn::Result<FileArgs> {
    let mut file = None;
    let mut dispatch = None;
    let mut machine = None;
    let parser = syn::meta::parser(|meta| {
        if meta.path.is_ident("file") {
            file = Some(meta.value()?.parse::<syn::LitStr>()?);
        } else if meta.path.is_ident("dispatch") {
            let lit = meta.value()?.parse::<syn::LitStr>()?;
            dispatch = Some(match lit.value().as_str() {
                "table" => DispatchStyle::Table,
                "match" => DispatchStyle::Match,
                other => {
                    return Err(syn::Error::new(
                        lit.span(),
                        format!(
                            "unknown dispatch style `{other}`: expected \"table\" or \"match\""
                        ),
                    ))
                }
            });
        } else if meta.path.is_ident("machine") {
            machine = Some(meta.value()?.parse::<syn::LitStr>()?);
        } else {
            return Err(meta.error(
                "unknown argument: expected `file = \"..\"`, `dispatch = \"table\"|\"match\"` \
                 or `machine = \"Name\"`",
            ));
        }
        Ok(())
    });
    syn::parse::Parser::parse2(parser, args)?;
    let file = file.ok_or_else(|| {
        syn::Error::new(
            Span::call_site(),
            "missing `file = \"path/to/spec.detent\"` (relative to the crate's Cargo.toml)",
        )
    })?;
    Ok(FileArgs {
        file,
        dispatch,
        machine,
    })
}

/// What checking a file gives back: text only, so no fallback span escapes.
struct FileOutcome {
    errors: Vec<String>,
    warnings: Vec<String>,
    /// Module doc attributes and items, as token text, when there are no errors.
    doc: String,
    items: String,
}

/// `#[machine_file(..)] mod m { .. }`.
pub fn file(args: TokenStream, item: TokenStream) -> TokenStream {
    match expand_file(args, item) {
        Ok(tokens) => tokens,
        Err(e) => e.to_compile_error(),
    }
}

fn expand_file(args: TokenStream, item: TokenStream) -> syn::Result<TokenStream> {
    let args = parse_args(args)?;
    let mut module: syn::ItemMod = syn::parse2(item).map_err(|e| {
        syn::Error::new(
            e.span(),
            "`#[machine_file(..)]` goes on a `mod name { .. }`",
        )
    })?;
    let Some((brace, user_items)) = module.content.take() else {
        return Err(syn::Error::new_spanned(
            &module,
            "`#[machine_file(..)]` needs an inline module: write `mod name {}`",
        ));
    };
    let written = args.file.value();
    let lit_span = args.file.span();
    let base = std::env::var_os("CARGO_MANIFEST_DIR")
        .map(std::path::PathBuf::from)
        .unwrap_or_default();
    let path = base.join(&written);
    let text = driver::read_text(&path.display().to_string()).map_err(|e| {
        let why = match &e {
            ReadError::Io { source, .. } => source.to_string(),
            other => other.to_string(),
        };
        syn::Error::new(
            lit_span,
            format!(
                "cannot read the spec `{written}`: {why}\n= note: the path is relative to the \
                 directory of the crate's Cargo.toml"
            ),
        )
    })?;
    let wanted = args.machine.as_ref().map(syn::LitStr::value);
    // The file's tokens must carry line/column spans, which proc-macro2 gives only in
    // its own (fallback) implementation: use it while checking, then switch back.
    // Everything crosses over as text, so no fallback token reaches the compiler.
    let outcome = {
        let _fallback = FallbackSpans::new();
        check_file(&written, &text, args.dispatch, wanted.as_deref())
    }?;
    let mut out = TokenStream::new();
    for e in &outcome.errors {
        out.extend(syn::Error::new(lit_span, e).to_compile_error());
    }
    for w in &outcome.warnings {
        out.extend(warning(lit_span, "detent_warning", w));
    }
    let path_text = path.display().to_string();
    if !outcome.errors.is_empty() {
        // Keep the user's module (so other errors stay quiet) but generate nothing.
        module.content = Some((brace, user_items));
        return Ok(quote!(#out #module));
    }
    let generated: TokenStream = outcome
        .items
        .parse()
        .map_err(|_| syn::Error::new(lit_span, "detent generated unparsable code"))?;
    let doc: TokenStream = outcome.doc.parse().unwrap_or_default();
    let has_doc = module.attrs.iter().any(|a| a.path().is_ident("doc"));
    let attrs = &module.attrs;
    let vis = &module.vis;
    let name = &module.ident;
    let doc = if has_doc { quote!() } else { doc };
    Ok(quote! {
        #out
        #(#attrs)*
        #doc
        #[allow(non_camel_case_types, non_snake_case, clippy::nonminimal_bool, clippy::if_same_then_else)]
        #vis mod #name {
            // Rebuild when the spec changes.
            const _: &str = include_str!(#path_text);
            #(#user_items)*
            #generated
        }
    })
}

/// Switches proc-macro2 to its fallback implementation until dropped (even when a
/// panic unwinds through).
struct FallbackSpans;

impl FallbackSpans {
    fn new() -> Self {
        proc_macro2::fallback::force();
        FallbackSpans
    }
}

impl Drop for FallbackSpans {
    fn drop(&mut self) {
        proc_macro2::fallback::unforce();
    }
}

/// Checks a spec file and generates its code, all as text.
fn check_file(
    written: &str,
    text: &str,
    dispatch: Option<DispatchStyle>,
    wanted: Option<&str>,
) -> syn::Result<FileOutcome> {
    let report = driver::check_source(written, text);
    let src = Source::new(&report.file, &report.text);
    let mut outcome = FileOutcome {
        errors: Vec::new(),
        warnings: Vec::new(),
        doc: String::new(),
        items: String::new(),
    };
    for d in report.diagnostics() {
        let full = render::render_text(d, &src);
        // rustc prints its own `error:`/`warning:` prefix: keep our lint name after it.
        let body = full
            .split_once(": ")
            .map(|(_, rest)| rest.to_string())
            .unwrap_or(full.clone());
        let body = format!("{} [detent::{}]", body.trim_end(), d.lint.name());
        if d.is_error() {
            outcome.errors.push(body);
        } else {
            outcome.warnings.push(body);
        }
    }
    if !outcome.errors.is_empty() {
        return Ok(outcome);
    }
    let mut machines = report.into_machines();
    if let Some(name) = wanted {
        machines.retain(|m| m.name == name);
        if machines.is_empty() {
            outcome
                .errors
                .push(format!("`{written}` has no machine named `{name}`"));
            return Ok(outcome);
        }
    }
    match machines.as_slice() {
        [] => outcome
            .errors
            .push(format!("`{written}` defines no machine")),
        [m] => {
            outcome.doc = rust::module_doc(m).to_string();
            outcome.items = rust::machine_items(m, dispatch.unwrap_or(m.dispatch)).to_string();
        }
        several => {
            let mods = several
                .iter()
                .map(|m| rust::machine_tokens(m, dispatch.unwrap_or(m.dispatch)));
            outcome.items = quote!(#(#mods)*).to_string();
        }
    }
    Ok(outcome)
}
