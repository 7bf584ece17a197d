//! `cmake/Detent.cmake`: a C program built with CMake (Debian's `cmake`) from a spec,
//! through `detent_add_machine`, with the `detent` binary of this build. The build runs
//! `detent gen c`, the program runs the generated machines; a build with nothing changed
//! regenerates nothing, touching the spec regenerates, editing it changes the program,
//! and a spec with errors fails the build with detent's diagnostic.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::time::{Duration, SystemTime};

fn workspace_root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .expect("cli/ sits in the workspace")
        .to_path_buf()
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("detent-cmake-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// Two machines: one name with an acronym, to hold the module's file names to detent's.
const SPEC_V1: &str = "\
// A lamp toggled by a button, and a beeper.
machine Lamp {
    events Press;
    outputs on;
    start Off;
    state Off { Press => On; }
    state On emit on { Press => Off; }
}

/// machine NotAMachine in a doc comment is not a machine.
machine HTTPBeeper {
    events Ping;
    actions beep;
    start Quiet;
    state Quiet { Ping => stay, do beep; }
}
";

/// The lamp gets a third state: three presses now end in `Off`, not `On`.
const SPEC_V2: &str = "\
machine Lamp {
    events Press;
    outputs on;
    start Off;
    state Off { Press => On; }
    state On emit on { Press => Dim; }
    state Dim emit on { Press => Off; }
}

machine HTTPBeeper {
    events Ping;
    actions beep;
    start Quiet;
    state Quiet { Ping => stay, do beep; }
}
";

const MAIN_C: &str = r#"#include <stdio.h>
#include "lamp.h"
#include "http_beeper.h"

static int beeps;
static void beep(void *ctx) { (void)ctx; beeps++; }

int main(void) {
    struct lamp_machine m;
    struct lamp_outputs out;
    int i;
    struct http_beeper_machine b;
    struct http_beeper_hooks hooks = {0};
    struct http_beeper_outputs bout;
    lamp_init(&m);
    for (i = 0; i < 3; i++) {
        if (lamp_step(&m, LAMP_E_PRESS, NULL, NULL, &out) != 0) return 1;
    }
    hooks.beep = beep;
    http_beeper_init(&b);
    (void)bout;
    if (http_beeper_step(&b, HTTP_BEEPER_E_PING, &hooks, NULL, &bout) != 0) return 1;
    printf("%s on=%d beeps=%d\n", lamp_state_name((enum lamp_state)m.state), out.on, beeps);
    return 0;
}
"#;

fn cmake_lists() -> String {
    format!(
        "cmake_minimum_required(VERSION 3.13)\n\
         project(lamp C)\n\
         list(APPEND CMAKE_MODULE_PATH \"{}\")\n\
         include(Detent)\n\
         add_executable(lamp main.c)\n\
         target_compile_options(lamp PRIVATE -std=c99 -Wall -Wextra -Werror -pedantic)\n\
         detent_add_machine(lamp specs/lamp.detent)\n",
        workspace_root().join("cmake").display()
    )
}

fn run(cmd: &mut Command) -> Output {
    let o = cmd.output().unwrap_or_else(|e| {
        panic!("cannot run {cmd:?} (is Debian's cmake installed? scripts/test.sh installs it): {e}")
    });
    o
}

fn text(o: &Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

fn build(build_dir: &Path) -> Output {
    run(Command::new("cmake").arg("--build").arg(build_dir))
}

fn mtime(p: &Path) -> SystemTime {
    std::fs::metadata(p).unwrap().modified().unwrap()
}

/// Sets a file's modification time past every file the last build wrote (make compares
/// modification times; the offset keeps this independent of the file system's
/// resolution).
fn touch(p: &Path) {
    let f = std::fs::File::options().write(true).open(p).unwrap();
    f.set_modified(SystemTime::now() + Duration::from_secs(3))
        .unwrap();
}

#[test]
fn a_cmake_build_generates_compiles_and_regenerates_when_the_spec_changes() {
    let dir = scratch("lamp");
    let src = dir.join("src");
    let bin = dir.join("build");
    std::fs::create_dir_all(src.join("specs")).unwrap();
    let spec = src.join("specs/lamp.detent");
    std::fs::write(&spec, SPEC_V1).unwrap();
    std::fs::write(src.join("main.c"), MAIN_C).unwrap();
    std::fs::write(src.join("CMakeLists.txt"), cmake_lists()).unwrap();

    let o = run(Command::new("cmake")
        .arg("-S")
        .arg(&src)
        .arg("-B")
        .arg(&bin)
        .arg(format!(
            "-DDETENT_EXECUTABLE={}",
            env!("CARGO_BIN_EXE_detent")
        )));
    assert!(o.status.success(), "configure failed:\n{}", text(&o));

    let o = build(&bin);
    assert!(o.status.success(), "build failed:\n{}", text(&o));
    assert!(
        text(&o).contains("detent: generating C from specs/lamp.detent"),
        "{}",
        text(&o)
    );
    let generated = bin.join("detent/lamp");
    for f in ["lamp.h", "lamp.c", "http_beeper.h", "http_beeper.c"] {
        assert!(generated.join(f).is_file(), "{f} not generated");
    }
    let program = bin.join("lamp");
    let o = run(&mut Command::new(&program));
    assert!(o.status.success(), "{}", text(&o));
    assert_eq!(String::from_utf8_lossy(&o.stdout), "On on=1 beeps=1\n");

    // Nothing changed: nothing is generated again.
    let before = mtime(&generated.join("lamp.c"));
    let o = build(&bin);
    assert!(o.status.success(), "{}", text(&o));
    assert!(!text(&o).contains("detent: generating"), "{}", text(&o));
    assert_eq!(mtime(&generated.join("lamp.c")), before);

    // Touching the spec regenerates.
    touch(&spec);
    let o = build(&bin);
    assert!(o.status.success(), "{}", text(&o));
    assert!(text(&o).contains("detent: generating C"), "{}", text(&o));
    assert!(mtime(&generated.join("lamp.c")) > before);

    // Editing it changes the program.
    std::fs::write(&spec, SPEC_V2).unwrap();
    touch(&spec);
    let o = build(&bin);
    assert!(o.status.success(), "{}", text(&o));
    let o = run(&mut Command::new(&program));
    assert_eq!(String::from_utf8_lossy(&o.stdout), "Off on=0 beeps=1\n");

    // A spec with errors fails the build and says why, at the spec's line.
    std::fs::write(&spec, SPEC_V2.replace("Press => Off;", "Press => Of;")).unwrap();
    touch(&spec);
    let o = build(&bin);
    assert!(!o.status.success(), "{}", text(&o));
    let t = text(&o);
    assert!(t.contains("Of") && t.contains("lamp.detent:7"), "{t}");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn choosing_a_machine_and_naming_errors() {
    let dir = scratch("choose");
    let src = dir.join("src");
    std::fs::create_dir_all(&src).unwrap();
    std::fs::write(src.join("lamp.detent"), SPEC_V1).unwrap();
    std::fs::write(
        src.join("main.c"),
        "#include \"lamp.h\"\nint main(void) { struct lamp_machine m; lamp_init(&m); return m.state; }\n",
    )
    .unwrap();
    let lists = |machine: &str| {
        format!(
            "cmake_minimum_required(VERSION 3.13)\nproject(one C)\n\
             include(\"{}\")\nadd_executable(one main.c)\n\
             detent_add_machine(one lamp.detent MACHINE {machine} OUTPUT_DIR gen)\n",
            workspace_root().join("cmake/Detent.cmake").display()
        )
    };
    let configure = |b: &str| {
        run(Command::new("cmake")
            .arg("-S")
            .arg(&src)
            .arg("-B")
            .arg(dir.join(b))
            .arg(format!(
                "-DDETENT_EXECUTABLE={}",
                env!("CARGO_BIN_EXE_detent")
            )))
    };
    std::fs::write(src.join("CMakeLists.txt"), lists("Lamp")).unwrap();
    let o = configure("b1");
    assert!(o.status.success(), "{}", text(&o));
    let o = build(&dir.join("b1"));
    assert!(o.status.success(), "{}", text(&o));
    assert!(dir.join("b1/gen/lamp.c").is_file());
    let o = run(&mut Command::new(dir.join("b1/one")));
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));

    // A machine the spec does not have is named, with the ones it has.
    std::fs::write(src.join("CMakeLists.txt"), lists("Lmap")).unwrap();
    let o = configure("b2");
    assert!(!o.status.success());
    // CMake wraps messages: compare with the whitespace collapsed.
    let t = text(&o).split_whitespace().collect::<Vec<_>>().join(" ");
    assert!(
        t.contains("has no machine `Lmap`") && t.contains("Lamp, HTTPBeeper"),
        "{t}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}
