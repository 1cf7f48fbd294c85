//! The C, C++ and Fortran examples, compiled here against the built library and run against a
//! real server, print the bits of every value they evaluated; this harness compares them with
//! the Rust client's local evaluation of the same tables at the same temperature bits. Each
//! example also saves a table file, loads it with no server and reports whether the loaded
//! tables gave the same bits, and shows a refused request.
//!
//! Needs cc, c++ and gfortran (`apt-get install gcc g++ gfortran`); a missing compiler fails
//! the test with that message.

use ratewell_client::{Client, ClientConfig, DatasetRef, EvalOptions, RateBuffers};
use ratewell_e2e::TestServer;
use std::path::{Path, PathBuf};
use std::process::Command;

/// The folder holding libratewell.a built from this source: target/<profile>/deps (written by
/// the same rustc run that built the library this test links), else target/<profile>.
fn library_dir() -> PathBuf {
    let exe = std::env::current_exe().expect("test binary path");
    let deps = exe.parent().expect("target/<profile>/deps").to_path_buf();
    let profile = deps.parent().expect("target/<profile>").to_path_buf();
    [deps, profile]
        .into_iter()
        .find(|dir| dir.join("libratewell.a").is_file())
        .unwrap_or_else(|| {
            panic!(
                "{} has no libratewell.a: build it with `cargo build -p ratewell-ffi`",
                exe.display()
            )
        })
}

fn crate_dir() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

fn run_tool(tool: &str, args: &[&str], cwd: &Path) {
    let out = Command::new(tool)
        .args(args)
        .current_dir(cwd)
        .output()
        .unwrap_or_else(|e| {
            panic!("cannot run {tool} ({e}): install it (Debian: apt-get install gcc g++ gfortran)")
        });
    assert!(
        out.status.success(),
        "{tool} {args:?} failed:\n{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

/// Compiles the three examples into `work`; returns (language, program path).
fn build_examples(work: &Path) -> Vec<(&'static str, PathBuf)> {
    let lib = library_dir();
    let lib_dir = lib.to_str().unwrap();
    let include = crate_dir().join("include");
    let include = include.to_str().unwrap();
    let src = |p: &str| crate_dir().join(p).to_str().unwrap().to_string();
    let link = ["-L", lib_dir, "-l:libratewell.a", "-lpthread", "-ldl", "-lm"];
    let c = src("examples/c/rates.c");
    let mut args = vec!["-std=c11", "-Wall", "-I", include, c.as_str(), "-o", "rates_c"];
    args.extend(link);
    run_tool("cc", &args, work);
    let cpp = src("examples/cpp/rates.cpp");
    let mut args = vec![
        "-std=c++17",
        "-Wall",
        "-I",
        include,
        cpp.as_str(),
        "-o",
        "rates_cpp",
    ];
    args.extend(link);
    run_tool("c++", &args, work);
    let module = src("fortran/ratewell.f90");
    run_tool(
        "gfortran",
        &["-Wall", "-c", module.as_str(), "-o", "ratewell_mod.o"],
        work,
    );
    let program = src("examples/fortran/rates.f90");
    let mut args = vec![program.as_str(), "ratewell_mod.o", "-o", "rates_fortran"];
    args.extend(link);
    run_tool("gfortran", &args, work);
    vec![
        ("C", work.join("rates_c")),
        ("C++", work.join("rates_cpp")),
        ("Fortran", work.join("rates_fortran")),
    ]
}

/// What an example printed.
#[derive(Debug, Default)]
struct Printed {
    stamp: Vec<(String, String)>,
    temperatures: Vec<f64>,
    /// (upper, lower, j, excitation bits, de-excitation bits, flags)
    values: Vec<(u32, u32, usize, u64, u64, u32)>,
    file_line: String,
    refusal: String,
}

fn parse(text: &str) -> Printed {
    let hex = |s: &str| u64::from_str_radix(&s.to_ascii_lowercase(), 16).expect("hex bits");
    let mut p = Printed::default();
    for line in text.lines() {
        let w: Vec<&str> = line.split_whitespace().collect();
        match w.first().copied() {
            Some("stamp") => p.stamp.push((w[1].into(), w.get(2).unwrap_or(&"").to_string())),
            Some("T") => p.temperatures.push(f64::from_bits(hex(w[2]))),
            Some("V") => p.values.push((
                w[1].parse().unwrap(),
                w[2].parse().unwrap(),
                w[3].parse().unwrap(),
                hex(w[4]),
                hex(w[5]),
                w[6].parse().unwrap(),
            )),
            Some("file") => p.file_line = line.into(),
            Some("refusal") => p.refusal = line.into(),
            _ => {}
        }
    }
    p
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn c_cpp_and_fortran_examples_give_the_rust_bits() {
    let work = std::env::temp_dir().join(format!("ratewell-ffi-languages-{}", std::process::id()));
    std::fs::create_dir_all(&work).unwrap();
    let programs = {
        let work = work.clone();
        tokio::task::spawn_blocking(move || build_examples(&work))
            .await
            .unwrap()
    };
    let server = TestServer::start().await;
    let url = server.url();
    let client =
        Client::new(ClientConfig::new(url.clone()).with_dataset(DatasetRef::new("demo").unwrap())).unwrap();
    let tables = client.fetch_tables("Mk III", None).await.unwrap();
    for (language, program) in programs {
        let files = work.join(format!("files-{language}"));
        let (url, program2, files2) = (url.clone(), program.clone(), files.clone());
        let out = tokio::task::spawn_blocking(move || {
            Command::new(&program2)
                .arg(&url)
                .arg(&files2)
                .output()
                .expect("run the example")
        })
        .await
        .unwrap();
        let stdout = String::from_utf8_lossy(&out.stdout).to_string();
        assert!(
            out.status.success(),
            "{language} example failed: {}\n{stdout}",
            String::from_utf8_lossy(&out.stderr)
        );
        let printed = parse(&stdout);
        let stamp = tables.stamp();
        let expected_stamp = vec![
            ("id".to_string(), stamp.id.clone()),
            ("version".to_string(), stamp.version.clone()),
            ("content_hash".to_string(), stamp.content_hash.clone()),
            ("table_set_digest".to_string(), tables.digest().to_string()),
        ];
        assert_eq!(printed.stamp, expected_stamp, "{language} stamp");
        assert_eq!(printed.temperatures.len(), 40, "{language}");
        let mut reference = RateBuffers::default();
        tables
            .evaluate_into(&[], &printed.temperatures, EvalOptions::default(), &mut reference)
            .unwrap();
        let n = printed.temperatures.len();
        let transitions = tables.transitions();
        assert_eq!(
            printed.values.len(),
            transitions.len() * n,
            "{language}: one line per value"
        );
        for (k, &(upper, lower, j, e, d, f)) in printed.values.iter().enumerate() {
            let (t, jj) = (k / n, k % n);
            assert_eq!(
                (upper, lower, j),
                (transitions[t].upper, transitions[t].lower, jj),
                "{language} order"
            );
            assert_eq!(
                e,
                reference.excitation[k].to_bits(),
                "{language} excitation {upper}-{lower} T[{j}]"
            );
            assert_eq!(
                d,
                reference.deexcitation[k].to_bits(),
                "{language} de-excitation {upper}-{lower} T[{j}]"
            );
            assert_eq!(f, reference.flags[k], "{language} flags {upper}-{lower} T[{j}]");
        }
        assert!(
            printed.file_line.starts_with("file same-bits "),
            "{language}: {}",
            printed.file_line
        );
        assert!(
            printed.file_line.ends_with(".rwtables"),
            "{language}: {}",
            printed.file_line
        );
        if language != "C" {
            assert!(
                printed.refusal.starts_with("refusal 1 ")
                    && printed
                        .refusal
                        .contains("temperatures[0] = -5 K: must be finite and > 0"),
                "{language}: {}",
                printed.refusal
            );
        }
    }
    std::fs::remove_dir_all(&work).unwrap();
}
