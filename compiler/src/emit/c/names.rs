//! The C spellings of a machine's names: spec names kept where C allows them,
//! keywords and collisions renamed predictably.

use crate::model::Machine;
use crate::naming::to_snake;
use std::fmt::Write;

/// The file stem of a machine's C files: its name in snake_case.
pub fn c_stem(m: &Machine) -> String {
    c_ident(&to_snake(&m.name))
}

/// Words that cannot name a struct member or a function in C99, C11 or C++, or that
/// `<stdbool.h>` and `<stddef.h>` define as macros. A name of the spec that is one of
/// them gets a trailing `_` in C.
const RESERVED: &[&str] = &[
    "auto",
    "break",
    "case",
    "char",
    "const",
    "continue",
    "default",
    "do",
    "double",
    "else",
    "enum",
    "extern",
    "float",
    "for",
    "goto",
    "if",
    "inline",
    "int",
    "long",
    "register",
    "restrict",
    "return",
    "short",
    "signed",
    "sizeof",
    "static",
    "struct",
    "switch",
    "typedef",
    "union",
    "unsigned",
    "void",
    "volatile",
    "while",
    "bool",
    "true",
    "false",
    "NULL",
    "asm",
    "catch",
    "class",
    "const_cast",
    "delete",
    "dynamic_cast",
    "explicit",
    "export",
    "friend",
    "mutable",
    "namespace",
    "new",
    "operator",
    "private",
    "protected",
    "public",
    "reinterpret_cast",
    "static_cast",
    "template",
    "this",
    "throw",
    "try",
    "typeid",
    "typename",
    "using",
    "virtual",
    "wchar_t",
    "and",
    "or",
    "not",
    "xor",
    "bitand",
    "bitor",
    "compl",
    "and_eq",
    "or_eq",
    "xor_eq",
    "not_eq",
    "alignas",
    "alignof",
    "char16_t",
    "char32_t",
    "constexpr",
    "decltype",
    "noexcept",
    "nullptr",
    "static_assert",
    "thread_local",
    "offsetof",
    "errno",
    "assert",
];

/// A C identifier for a spec name: characters outside `[A-Za-z0-9_]` become `_uXXXX`.
pub(super) fn c_ident(name: &str) -> String {
    let mut out = String::new();
    for c in name.chars() {
        if c.is_ascii_alphanumeric() || c == '_' {
            out.push(c);
        } else {
            let _ = write!(out, "_u{:04X}", c as u32);
        }
    }
    out
}

/// Gives each name a distinct C spelling: reserved words get a trailing `_`, and a
/// spelling already taken gets `_<n>` appended (n = 2, 3, ...).
struct Namer {
    taken: std::collections::HashSet<String>,
}

impl Namer {
    fn new() -> Self {
        Namer {
            taken: std::collections::HashSet::new(),
        }
    }

    fn name(&mut self, base: String) -> String {
        let mut base = base;
        if RESERVED.contains(&base.as_str()) {
            base.push('_');
        }
        let mut candidate = base.clone();
        let mut n = 2;
        while !self.taken.insert(candidate.clone()) {
            candidate = format!("{base}_{n}");
            n += 1;
        }
        candidate
    }
}

/// The C spellings of everything the generated files name, indexed by the model's ids.
/// Spec names are kept, except that a C or C++ keyword gets a trailing `_`, a
/// character outside `[A-Za-z0-9_]` becomes `_uXXXX`, and a spelling already taken in
/// the same C namespace gets `_2`, `_3`, ... appended.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct CNames {
    /// The prefix of every name, the file stem (`bilge_pump`).
    pub p: String,
    /// The prefix of every constant (`BILGE_PUMP`).
    pub up: String,
    /// State enum constants (`BILGE_PUMP_S_IDLE`).
    pub states: Vec<String>,
    /// Event enum constants (`BILGE_PUMP_E_FLOAT_UP`).
    pub events: Vec<String>,
    /// Members of `struct <p>_outputs`.
    pub outputs: Vec<String>,
    /// Input members of `struct <p>_hooks`.
    pub inputs: Vec<String>,
    /// Action members of `struct <p>_hooks`.
    pub actions: Vec<String>,
    /// Timer members of `struct <p>_machine` (`timer_<scope>`).
    pub timers: Vec<String>,
    /// Counter members of `struct <p>_machine` (`counter_<name>`).
    pub counters: Vec<String>,
}

impl CNames {
    /// The C spellings for a machine.
    pub fn new(m: &Machine) -> CNames {
        let p = c_stem(m);
        let up = p.to_uppercase();
        let screaming = |prefix: &str, items: &mut dyn Iterator<Item = &str>| {
            let mut namer = Namer::new();
            items
                .map(|n| namer.name(format!("{prefix}{}", c_ident(&to_snake(n)).to_uppercase())))
                .collect::<Vec<_>>()
        };
        let states = screaming(
            &format!("{up}_S_"),
            &mut m.states.iter().map(|s| s.name.as_str()),
        );
        let events = screaming(
            &format!("{up}_E_"),
            &mut m.events.iter().map(|s| s.name.as_str()),
        );
        let mut namer = Namer::new();
        let outputs = m
            .outputs
            .iter()
            .map(|o| namer.name(c_ident(&o.name)))
            .collect();
        let mut namer = Namer::new();
        let inputs = m
            .inputs
            .iter()
            .map(|o| namer.name(c_ident(&o.name)))
            .collect();
        let actions = m
            .actions
            .iter()
            .map(|o| namer.name(c_ident(&o.name)))
            .collect();
        CNames {
            p,
            up,
            states,
            events,
            outputs,
            inputs,
            actions,
            timers: crate::emit::timers::timer_names(m)
                .iter()
                .map(|n| format!("timer_{}", c_ident(n)))
                .collect(),
            counters: m
                .counters
                .iter()
                .map(|c| format!("counter_{}", c_ident(&c.name)))
                .collect(),
        }
    }
}
