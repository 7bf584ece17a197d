//! The hardware port under Icarus Verilog, for every suite that simulates it: compile a
//! module with its self-checking testbench (`iverilog -g2005 -Wall`), run it (`vvp -n`)
//! and read the verdict; pick an encoding and flip-flop type per machine; re-check every
//! cover of a design; and the whole round trip of one machine (port, covers, testbench,
//! simulation).
//!
//! The testbench prints `PASS` when every check held and ends with `$fatal` (a non-zero
//! exit status) on the first `MISMATCH`; [`simulate_files`] refuses a run whose output
//! and exit status disagree, and any warning from `iverilog`.

use crate::c_harness::require_tool;
use detent_compiler::logic::assign::Encoding;
use detent_compiler::logic::equations::{synthesize, LogicDesign, LogicSpec};
use detent_compiler::logic::excitation::FlipFlop;
use detent_compiler::logic::verilog::{generate_module, generate_testbench, TbStep};
use detent_compiler::logic::{check_cover, check_cube_cover, CubeFunction, Function};
use detent_compiler::model::Machine;
use std::path::Path;
use std::process::Command;

/// What one simulation printed, and whether the testbench passed.
#[derive(Clone, Debug)]
pub struct Simulation {
    /// Everything the testbench printed.
    pub printed: String,
    /// It printed `PASS` and no `MISMATCH` (and so exited with status 0).
    pub passed: bool,
    /// The simulator's exit code (`Some(1)` after the testbench's `$fatal`).
    pub code: Option<i32>,
}

impl Simulation {
    /// The first `MISMATCH cycle N ...` line and its cycle (cycle 1 is the first reset
    /// pulse), if any.
    pub fn mismatch(&self) -> Option<(usize, &str)> {
        let line = self.printed.lines().find(|l| l.contains("MISMATCH"))?;
        let cycle = line.split_whitespace().nth(2)?.parse().ok()?;
        Some((cycle, line))
    }
}

/// Compiles the Verilog files `v` (module) and `tb` (testbench) into `exe` and runs it.
///
/// # Errors
///
/// When Icarus is missing (with the advice to run `scripts/test.sh`), `iverilog` fails
/// or warns, or the testbench's output and exit status disagree.
pub fn simulate_files(v: &Path, tb: &Path, exe: &Path) -> Result<Simulation, String> {
    let advice = |e: String| {
        format!(
            "{e} (Icarus Verilog; run scripts/test.sh, which installs the Debian package iverilog)"
        )
    };
    let out = Command::new(require_tool("iverilog").map_err(advice)?)
        .args(["-g2005", "-Wall", "-o"])
        .arg(exe)
        .arg(v)
        .arg(tb)
        .output()
        .map_err(|e| format!("cannot run iverilog: {e}"))?;
    let stderr = String::from_utf8_lossy(&out.stderr);
    if !out.status.success() || stderr.contains("warning") {
        return Err(format!("iverilog on {}:\n{stderr}", v.display()));
    }
    let run = Command::new(require_tool("vvp").map_err(advice)?)
        .arg("-n")
        .arg(exe)
        .output()
        .map_err(|e| format!("cannot run vvp: {e}"))?;
    let printed = String::from_utf8_lossy(&run.stdout).into_owned();
    let passed = printed.lines().any(|l| l.trim() == "PASS") && !printed.contains("MISMATCH");
    if passed != run.status.success() {
        return Err(format!(
            "the testbench exited with {} but printed:\n{printed}",
            run.status
        ));
    }
    Ok(Simulation {
        printed,
        passed,
        code: run.status.code(),
    })
}

/// Writes `module` and `tb` into `dir` (created if missing) and simulates them.
///
/// # Errors
///
/// As [`simulate_files`], and when the files cannot be written.
pub fn simulate(dir: &Path, module: &str, tb: &str) -> Result<Simulation, String> {
    std::fs::create_dir_all(dir).map_err(|e| format!("{}: {e}", dir.display()))?;
    let (v, t, exe) = (dir.join("m.v"), dir.join("m_tb.v"), dir.join("m.vvp"));
    std::fs::write(&v, module).map_err(|e| format!("{}: {e}", v.display()))?;
    std::fs::write(&t, tb).map_err(|e| format!("{}: {e}", t.display()))?;
    simulate_files(&v, &t, &exe)
}

/// The encoding and flip-flop type of the `pick`-th machine of a suite: binary, Gray and
/// one-hot in turn, and the four flip-flop types in turn (3 and 4 share no factor, so
/// any 12 machines in a row take every pair). One-hot falls back to binary where it
/// cannot be had.
pub fn port_choice(states: usize, pick: usize) -> (Encoding, FlipFlop) {
    let encoding = match pick % 3 {
        0 => Encoding::binary(states),
        1 => Encoding::gray(states),
        _ => Encoding::one_hot(states).unwrap_or_else(|_| Encoding::binary(states)),
    };
    (encoding, FlipFlop::ALL[pick % 4])
}

/// Re-checks every cover of a design against its on- and off-set, independently of the
/// check `synthesize` made: by minterms when the function has them, by cubes otherwise.
///
/// # Panics
///
/// On the first cover that is wrong, naming its function.
pub fn check_all_covers(d: &LogicDesign) {
    for f in &d.functions {
        match &f.minterms {
            Some((on, dc)) => {
                let func = Function {
                    vars: f.vars.clone(),
                    on: on.clone(),
                    dc: dc.clone(),
                };
                check_cover(&func, &f.cover).unwrap_or_else(|e| panic!("{}: {e}", f.name));
            }
            None => {
                let cf = CubeFunction {
                    vars: f.vars.clone(),
                    on: f.on_cubes.clone(),
                    dc: f.dc_cubes.clone(),
                };
                check_cube_cover(&cf, &f.cover).unwrap_or_else(|e| panic!("{}: {e}", f.name));
            }
        }
    }
}

/// A machine through the hardware port and back: synthesized with `encoding` and `ff`,
/// every cover re-checked, the module and the testbench of `steps` (the interpreter's
/// expectations) simulated in `dir`.
pub struct Ported {
    /// The logic spec of the machine.
    pub spec: LogicSpec,
    /// The synthesized design.
    pub design: LogicDesign,
    /// The Verilog module.
    pub module: String,
    /// The simulation of the testbench.
    pub simulation: Simulation,
}

/// Ports `m` with `encoding` and `ff` and simulates `steps`; see [`Ported`].
///
/// # Errors
///
/// When the port refuses the machine, or the simulation cannot run.
///
/// # Panics
///
/// When a cover is wrong ([`check_all_covers`]).
pub fn port_and_simulate(
    m: &Machine,
    encoding: &Encoding,
    ff: FlipFlop,
    steps: &[TbStep],
    dir: &Path,
) -> Result<Ported, String> {
    let spec = LogicSpec::from_machine(m)?;
    let design = synthesize(&spec, encoding, ff, false)?;
    check_all_covers(&design);
    let names: Vec<String> = m.states.iter().map(|s| s.name.clone()).collect();
    let module = generate_module(&spec, &design, &names, "test")?;
    let tb = generate_testbench(m, &spec, &design, steps, "test")?;
    let simulation = simulate(dir, &module, &tb)?;
    Ok(Ported {
        spec,
        design,
        module,
        simulation,
    })
}
