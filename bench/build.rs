//! Writes the benchmark's machines into `OUT_DIR`, three sizes in three forms each:
//!
//! - `small`: `bench/specs/locker.detent` (4 states, 4 events; the locker example as it
//!   was before it counted strikes itself, kept here as the fixed small machine);
//! - `medium` and `large`: random specs of 50 and 1,000 states from `tests/src/gen.rs`
//!   (fixed seeds, 8 events, 3 inputs, 4 outputs, 3 actions, nested groups; `unhandled
//!   ignore` and `complete`: seeds and policies chosen so that random events keep the
//!   machine moving, see `tests/agree.rs`).
//!
//! Forms: `table` and `matched` are detent's own `gen rust` output
//! ([`generate_file`] with each dispatch style), `hand` is the hand-written baseline of
//! `build/handwritten.rs`. `machines.rs` includes them and adds, per form, the hooks
//! impls of the benchmark's `Host` and the tests' `Recorder`, an out-of-line
//! `step_entry` (the function whose speed and size are measured) and a `Variant` impl.

#[path = "../tests/src/gen.rs"]
#[allow(dead_code)]
mod gen;
#[path = "build/handwritten.rs"]
mod handwritten;

use detent_compiler::driver::check_source;
use detent_compiler::emit::rust::{generate_file, module_name};
use detent_compiler::model::Machine;
use detent_compiler::syntax::ast::DispatchStyle;
use std::fmt::Write;
use std::path::{Path, PathBuf};

/// A machine of the benchmark: its size name and spec text.
struct Spec {
    size: &'static str,
    text: String,
}

fn specs() -> Vec<Spec> {
    let locker = Path::new("specs/locker.detent");
    println!("cargo:rerun-if-changed={}", locker.display());
    let small = std::fs::read_to_string(locker).expect("read bench/specs/locker.detent");
    let random = |states: usize, policy: &'static str, seed: u64| {
        gen::random_spec(
            seed,
            &gen::GenConfig {
                states: (states, states),
                events: 8,
                inputs: 3,
                outputs: 4,
                actions: 3,
                groups: true,
                policy: Some(policy),
                timeouts: false,
                counters: 0,
            },
        )
    };
    vec![
        Spec {
            size: "small",
            text: small,
        },
        Spec {
            size: "medium",
            text: random(50, "ignore", 50),
        },
        Spec {
            size: "large",
            text: random(1000, "complete", 1000),
        },
    ]
}

fn main() {
    println!("cargo:rerun-if-changed=build.rs");
    println!("cargo:rerun-if-changed=build/handwritten.rs");
    println!("cargo:rerun-if-changed=../tests/src/gen.rs");
    let out = PathBuf::from(std::env::var_os("OUT_DIR").expect("cargo sets OUT_DIR"));
    let mut all = String::new();
    for spec in specs() {
        let file = format!("{}.detent", spec.size);
        let report = check_source(&file, &spec.text);
        assert!(
            !report.has_errors(),
            "the {} spec has errors:\n{}",
            spec.size,
            spec.text
        );
        let m = report
            .machines
            .into_iter()
            .find_map(|m| m.machine)
            .expect("one machine");
        std::fs::write(out.join(&file), &spec.text).expect("write spec");
        for (style, form) in [
            (DispatchStyle::Table, "table"),
            (DispatchStyle::Match, "matched"),
        ] {
            let code = generate_file(&file, std::slice::from_ref(&m), Some(style));
            std::fs::write(out.join(format!("{}_{form}.rs", spec.size)), code)
                .expect("write generated code");
        }
        std::fs::write(
            out.join(format!("{}_hand.rs", spec.size)),
            handwritten::handwritten(&m),
        )
        .expect("write hand-written code");
        all.push_str(&size_module(spec.size, &m));
    }
    std::fs::write(out.join("machines.rs"), all).expect("write machines.rs");
}

/// `pub mod <size> { pub mod table {..} pub mod matched {..} pub mod hand {..} }`.
fn size_module(size: &str, m: &Machine) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "/// The {size} machine, `{}`.", m.name);
    let _ = writeln!(s, "pub mod {size} {{");
    let _ = writeln!(s, "    /// The machine's name.");
    let _ = writeln!(s, "    pub const NAME: &str = {:?};", m.name);
    let _ = writeln!(s, "    /// Number of states.");
    let _ = writeln!(s, "    pub const STATES: usize = {};", m.states.len());
    let _ = writeln!(s, "    /// Number of events.");
    let _ = writeln!(s, "    pub const EVENTS: usize = {};", m.events.len());
    let _ = writeln!(s, "    /// Number of inputs.");
    let _ = writeln!(s, "    pub const INPUTS: usize = {};", m.inputs.len());
    let _ = writeln!(s, "    /// Number of rules in the spec.");
    let _ = writeln!(s, "    pub const RULES: usize = {};", m.rules.len());
    let _ = writeln!(s, "    /// The spec.");
    let _ = writeln!(
        s,
        "    pub const SPEC: &str = include_str!(concat!(env!(\"OUT_DIR\"), \"/{size}.detent\"));"
    );
    for (form, rejected, doc) in [
        (
            "table",
            "::detent::Rejected",
            "detent's table-style `step`.",
        ),
        (
            "matched",
            "::detent::Rejected",
            "detent's match-style `step`.",
        ),
        ("hand", "m::Rejected", "the hand-written `match`."),
    ] {
        s.push_str(&form_module(size, form, rejected, doc, m));
    }
    s.push_str("}\n");
    s
}

fn form_module(size: &str, form: &str, rejected: &str, doc: &str, m: &Machine) -> String {
    let snake = module_name(m);
    let mut s = String::new();
    let _ = writeln!(s, "    /// The {size} machine as {doc}");
    let _ = writeln!(s, "    pub mod {form} {{");
    let _ = writeln!(
        s,
        "        include!(concat!(env!(\"OUT_DIR\"), \"/{size}_{form}.rs\"));"
    );
    let _ = writeln!(s, "        use self::{snake} as m;");
    for host in ["Host", "Recorder"] {
        let _ = writeln!(s, "        impl m::Hooks for crate::{host} {{");
        for (i, input) in m.inputs.iter().enumerate() {
            let _ = writeln!(
                s,
                "            fn {}(&mut self) -> bool {{ self.input({i}) }}",
                input.name
            );
        }
        for (i, action) in m.actions.iter().enumerate() {
            let _ = writeln!(
                s,
                "            fn {}(&mut self) {{ self.action({i}) }}",
                action.name
            );
        }
        let _ = writeln!(s, "        }}");
    }
    let bits: Vec<String> = m
        .outputs
        .iter()
        .enumerate()
        .map(|(i, o)| {
            if i == 0 {
                format!("u64::from(o.{})", o.name)
            } else {
                format!("(u64::from(o.{}) << {i})", o.name)
            }
        })
        .collect();
    let bits = if bits.is_empty() {
        "0".to_string()
    } else {
        bits.join(" | ")
    };
    let _ = writeln!(
        s,
        "        /// `step` with the benchmark's hooks, out of line: the function measured.
        #[inline(never)]
        pub fn step_entry(machine: &mut m::Machine, event: m::Event, host: &mut crate::Host) -> Result<m::Outputs, {rejected}> {{
            machine.step(event, host)
        }}
        /// This form as a [`crate::Variant`].
        pub struct V;
        impl crate::Variant for V {{
            type Machine = m::Machine;
            type Event = m::Event;
            type Out = Result<m::Outputs, {rejected}>;
            const FORM: &'static str = {form:?};
            fn start() -> m::Machine {{
                m::Machine::new()
            }}
            fn event(i: usize) -> m::Event {{
                m::Event::ALL[i]
            }}
            #[inline(always)]
            fn entry(machine: &mut m::Machine, event: m::Event, host: &mut crate::Host) -> Self::Out {{
                step_entry(machine, event, host)
            }}
            fn observe(out: &Self::Out) -> Option<u64> {{
                out.as_ref().ok().map(|o| {bits})
            }}
            fn step_recorded(machine: &mut m::Machine, event: m::Event, rec: &mut crate::Recorder) -> Option<u64> {{
                let out = machine.step(event, rec);
                Self::observe(&out)
            }}
            fn state(machine: &m::Machine) -> usize {{
                machine.state() as usize
            }}
        }}"
    );
    let _ = writeln!(s, "    }}");
    s
}
