//! Helpers shared by several test files.

/// A case count (or seed) for a long-running test, from the environment variable `name` when
/// it is set, else `default`: CI uses the small defaults, long runs set the variable. A value
/// that is not a number stops the test rather than quietly running the default.
#[allow(dead_code)] // Not every test file that shares this module runs long cases.
pub fn env_count(name: &str, default: u64) -> u64 {
    match std::env::var(name) {
        Err(_) => default,
        Ok(text) => text
            .trim()
            .parse()
            .unwrap_or_else(|_| panic!("{name}={text}: expected a whole number")),
    }
}

/// The input flags of the bundled demo scenario, relative to the repository root (where
/// `cargo test` runs integration tests).
#[allow(dead_code)] // Not every test file that shares this module runs the demo.
pub const DEMO: [&str; 6] = [
    "--registry",
    "demo-data/registry.yaml",
    "--images",
    "matrices/demo-images.yaml",
    "--priorities",
    "demo-data/priorities.yaml",
];

/// The demo registry and priorities with an images file written into `dir` holding
/// `images_yaml` instead of the demo's images, as command-line flags.
#[allow(dead_code)] // Not every test file that shares this module runs the demo.
pub fn demo_on_images(dir: &std::path::Path, images_yaml: &str) -> Vec<String> {
    demo_replacing(dir, "--images", images_yaml)
}

/// The demo's input flags with the file of `flag` (`--images`, `--priorities`) replaced by
/// one holding `yaml`, written into `dir`.
#[allow(dead_code)] // Not every test file that shares this module runs the demo.
pub fn demo_replacing(dir: &std::path::Path, flag: &str, yaml: &str) -> Vec<String> {
    let name = format!("{}.yaml", flag.trim_start_matches('-'));
    let path = write(dir, &name, yaml);
    let mut flags: Vec<String> = DEMO.map(str::to_string).to_vec();
    let at = flags
        .iter()
        .position(|f| f == flag)
        .unwrap_or_else(|| panic!("the demo gives no {flag}"));
    flags[at + 1] = path.to_str().unwrap().to_string();
    flags
}

/// Runs the built `basefit` with `args`; returns (exit code, stdout, stderr). A panic fails
/// the test whatever the exit code: bad input must be reported, never crash the tool.
#[allow(dead_code)] // Not every test file that shares this module runs the binary.
pub fn run_basefit<I, S>(args: I) -> (i32, String, String)
where
    I: IntoIterator<Item = S>,
    S: AsRef<std::ffi::OsStr>,
{
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_basefit"))
        .args(args)
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr).into_owned();
    assert!(!stderr.contains("panicked"), "panic: {stderr}");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr,
    )
}

/// Writes `content` to `name` in `dir` and returns the file's path.
#[allow(dead_code)] // Not every test file that shares this module writes inputs.
pub fn write(dir: &std::path::Path, name: &str, content: impl AsRef<[u8]>) -> std::path::PathBuf {
    let path = dir.join(name);
    std::fs::write(&path, content).unwrap();
    path
}

/// The demo scenario's inputs (registry, images, priorities) with the recorded results of
/// `results`, loaded as the command line would.
#[allow(dead_code)] // Not every test file that shares this module loads the demo.
pub fn demo_inputs(results: Vec<std::path::PathBuf>) -> basefit::load::Inputs {
    basefit::load::load_inputs(&basefit::load::InputPaths {
        registry: vec!["demo-data/registry.yaml".into()],
        images: Some("matrices/demo-images.yaml".into()),
        priorities: Some("demo-data/priorities.yaml".into()),
        results,
        ..Default::default()
    })
    .unwrap()
}

/// The lines of the `hints:` section of an `explain` text, trimmed.
#[allow(dead_code)] // Only the test files that read explain hints use it.
pub fn hint_lines(text: &str) -> Vec<String> {
    let hints = text
        .split("\nhints:\n")
        .nth(1)
        .unwrap_or_else(|| panic!("{text}"));
    hints
        .lines()
        .take_while(|l| !l.is_empty())
        .map(|l| l.trim().to_string())
        .collect()
}
