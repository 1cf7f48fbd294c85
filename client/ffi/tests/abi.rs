//! The C ABI called as C would call it: bad arguments are refused with a status and a message
//! naming the argument, value and allowed range; a pinned hash that differs is refused; a
//! server that goes away gives an error status, never a crash; eight threads evaluating one
//! table set at once get the bits one thread gets.

use ratewell::*;
use ratewell_e2e::TestServer;
use std::ffi::{CStr, CString, c_char};
use std::ptr::{null, null_mut};

fn c(s: &str) -> CString {
    CString::new(s).unwrap()
}

fn last_error() -> String {
    // SAFETY: the library returns a valid NUL-terminated string for this thread.
    unsafe { CStr::from_ptr(ratewell_last_error_message()) }
        .to_string_lossy()
        .into_owned()
}

/// Opens a connection and fetches "Mk III" (blocking calls: run off the async threads).
fn open_and_fetch(url: &str, pin: Option<&str>) -> (i32, *mut RatewellConnection, *mut RatewellTables) {
    let (url, id, species) = (c(url), c("demo"), c("Mk III"));
    let pin = pin.map(c);
    let mut connection = null_mut();
    // SAFETY: valid strings and out pointer.
    let s = unsafe {
        ratewell_open(
            url.as_ptr(),
            id.as_ptr(),
            null(),
            pin.as_ref().map_or(null(), |p| p.as_ptr()),
            20.0,
            null(),
            &mut connection,
        )
    };
    assert_eq!(s, RATEWELL_OK, "{}", last_error());
    let mut tables = null_mut();
    // SAFETY: live connection, valid string and out pointer.
    let s = unsafe { ratewell_fetch_tables(connection, species.as_ptr(), &mut tables) };
    (s, connection, tables)
}

struct Eval<'a> {
    tables: *const RatewellTables,
    temperatures: &'a [f64],
    excitation: *mut f64,
    deexcitation: *mut f64,
    flags: *mut u32,
    length: usize,
    outside: i32,
}

fn evaluate(e: &Eval) -> i32 {
    // SAFETY: the arrays behind the pointers have `length` values (or the test passes NULL on purpose).
    unsafe {
        ratewell_tables_evaluate(
            e.tables,
            null(),
            null(),
            0,
            e.temperatures.as_ptr(),
            e.temperatures.len(),
            RATEWELL_KELVIN,
            RATEWELL_CM3_PER_S,
            e.outside,
            e.excitation,
            e.deexcitation,
            e.flags,
            e.length,
        )
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn bad_arguments_are_refused_with_a_status_and_a_message() {
    let server = TestServer::start().await;
    let url = server.url();
    tokio::task::spawn_blocking(move || {
        let (s, connection, tables) = open_and_fetch(&url, None);
        assert_eq!(s, RATEWELL_OK, "{}", last_error());
        // SAFETY: live handle.
        let n_tables = unsafe { ratewell_tables_count(tables) };
        assert!(n_tables > 0);
        let temps = [5.0e3, 1.0e4, 2.0e4];
        let n = n_tables * temps.len();
        let (mut e, mut d, mut f) = (vec![0.0; n], vec![0.0; n], vec![0u32; n]);
        let good = Eval {
            tables,
            temperatures: &temps,
            excitation: e.as_mut_ptr(),
            deexcitation: d.as_mut_ptr(),
            flags: f.as_mut_ptr(),
            length: n,
            outside: RATEWELL_REFUSE,
        };
        assert_eq!(evaluate(&good), RATEWELL_OK, "{}", last_error());
        assert_eq!(last_error(), "");

        let short = format!("output_length = {}: must equal transitions x temperatures", n - 1);
        let cases: Vec<(Eval, i32, &str)> = vec![
            (
                Eval {
                    tables: null(),
                    ..good
                },
                RATEWELL_INVALID_ARGUMENT,
                "tables = NULL",
            ),
            (
                Eval {
                    flags: null_mut(),
                    ..good
                },
                RATEWELL_INVALID_ARGUMENT,
                "flags = NULL",
            ),
            (
                Eval {
                    excitation: null_mut(),
                    deexcitation: null_mut(),
                    ..good
                },
                RATEWELL_INVALID_ARGUMENT,
                "at least one output array",
            ),
            (
                Eval {
                    length: n - 1,
                    ..good
                },
                RATEWELL_INVALID_ARGUMENT,
                &short,
            ),
            (
                Eval {
                    temperatures: &[5.0e3, f64::NAN, 1e4],
                    ..good
                },
                RATEWELL_INVALID_ARGUMENT,
                "temperatures[1] = NaN K: must be finite and > 0",
            ),
            (
                Eval {
                    temperatures: &[5.0e3, 1e4, -3.0],
                    ..good
                },
                RATEWELL_INVALID_ARGUMENT,
                "temperatures[2] = -3 K: must be finite and > 0",
            ),
            (
                Eval {
                    temperatures: &[5.0e3, 1e4, 5.0e9],
                    ..good
                },
                RATEWELL_OUT_OF_RANGE,
                "temperatures[2] = 5000000000 K: outside the table grid",
            ),
            (
                Eval { outside: 7, ..good },
                RATEWELL_INVALID_ARGUMENT,
                "outside = 7: must be RATEWELL_REFUSE (0) or RATEWELL_EXTRAPOLATE (1)",
            ),
        ];
        for (case, status, words) in cases {
            assert_eq!(evaluate(&case), status, "{words}: {}", last_error());
            assert!(
                last_error().contains(words),
                "expected {words:?} in {:?}",
                last_error()
            );
        }
        // Extrapolation allowed: answered and flagged.
        let far = [5.0e3, 1e4, 5.0e9];
        assert_eq!(
            evaluate(&Eval {
                temperatures: &far,
                outside: RATEWELL_EXTRAPOLATE,
                ..good
            }),
            RATEWELL_OK
        );
        assert_eq!(f[2] & RATEWELL_FLAG_OUTSIDE_GRID, RATEWELL_FLAG_OUTSIDE_GRID);

        // Unknown transition, stamp buffers, bad stamp field, null strings.
        let (up, low) = ([99u32], [1u32]);
        // SAFETY: arrays of the lengths given.
        let s = unsafe {
            ratewell_tables_evaluate(
                tables,
                up.as_ptr(),
                low.as_ptr(),
                1,
                temps.as_ptr(),
                3,
                RATEWELL_KELVIN,
                RATEWELL_CM3_PER_S,
                RATEWELL_REFUSE,
                e.as_mut_ptr(),
                d.as_mut_ptr(),
                f.as_mut_ptr(),
                3,
            )
        };
        assert_eq!(s, RATEWELL_NOT_FOUND);
        assert!(
            last_error().contains("no rate table for transition 99-1"),
            "{}",
            last_error()
        );
        let mut small = [0 as c_char; 8];
        // SAFETY: buffer of 8 bytes.
        let s = unsafe {
            ratewell_tables_stamp(
                tables,
                RATEWELL_STAMP_CONTENT_HASH,
                small.as_mut_ptr(),
                small.len(),
            )
        };
        assert_eq!(s, RATEWELL_BUFFER_TOO_SMALL);
        assert!(last_error().contains("65 needed"), "{}", last_error());
        let mut buffer = [0 as c_char; 65];
        // SAFETY: buffer of 65 bytes.
        let s = unsafe { ratewell_tables_stamp(tables, 42, buffer.as_mut_ptr(), buffer.len()) };
        assert_eq!(s, RATEWELL_INVALID_ARGUMENT);
        assert!(
            last_error().starts_with("field = 42: must be one of"),
            "{}",
            last_error()
        );
        let mut other = null_mut();
        // SAFETY: null species on purpose; valid out pointer.
        let s = unsafe { ratewell_fetch_tables(connection, null(), &mut other) };
        assert_eq!(s, RATEWELL_INVALID_ARGUMENT);
        assert_eq!(last_error(), "species = NULL: must point to valid memory");
        let nope = c("Mk IX");
        // SAFETY: valid arguments.
        let s = unsafe { ratewell_fetch_tables(connection, nope.as_ptr(), &mut other) };
        assert_eq!(s, RATEWELL_NOT_FOUND, "{}", last_error());
        let (id, bad_url) = (c("demo"), c(" , "));
        let mut conn2 = null_mut();
        // SAFETY: valid strings.
        let s = unsafe {
            ratewell_open(
                bad_url.as_ptr(),
                id.as_ptr(),
                null(),
                null(),
                -1.0,
                null(),
                &mut conn2,
            )
        };
        assert_eq!(s, RATEWELL_INVALID_ARGUMENT);
        assert!(
            last_error().starts_with("endpoints = \" , \""),
            "{}",
            last_error()
        );
        // The message length can be asked for with a NULL buffer.
        // SAFETY: NULL with length 0 is allowed.
        assert_eq!(unsafe { ratewell_last_error(null_mut(), 0) }, last_error().len());
        // SAFETY: handles from the library, freed once; NULL frees are no-ops.
        unsafe {
            ratewell_tables_free(tables);
            ratewell_tables_free(null_mut());
            ratewell_close(connection);
            ratewell_close(null_mut());
        }
    })
    .await
    .unwrap();
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_pinned_hash_that_differs_is_refused() {
    let server = TestServer::start().await;
    let url = server.url();
    tokio::task::spawn_blocking(move || {
        let (s, connection, tables) = open_and_fetch(&url, Some(&"0".repeat(64)));
        assert_eq!(s, RATEWELL_HASH_MISMATCH, "{}", last_error());
        assert!(tables.is_null());
        assert!(last_error().contains("0000000000000000"), "{}", last_error());
        // SAFETY: live handle.
        unsafe { ratewell_close(connection) };
    })
    .await
    .unwrap();
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_server_that_goes_away_gives_an_error_status_and_eight_threads_agree() {
    let server = TestServer::start().await;
    let url = server.url();
    let (connection, tables) = tokio::task::spawn_blocking(move || {
        let (s, connection, tables) = open_and_fetch(&url, None);
        assert_eq!(s, RATEWELL_OK, "{}", last_error());
        (connection as usize, tables as usize)
    })
    .await
    .unwrap();
    server.shutdown().await.expect("clean shutdown");
    tokio::task::spawn_blocking(move || {
        let (connection, tables) = (
            connection as *mut RatewellConnection,
            tables as *mut RatewellTables,
        );
        // A solve needs the server, which is gone: an error status and a message.
        let (temps, dens, species) = ([1.0e4], [1.0e3], c("Mk III"));
        let mut answer = null_mut();
        // SAFETY: live connection, arrays of the lengths given.
        let s = unsafe {
            ratewell_solve_populations(
                connection,
                species.as_ptr(),
                temps.as_ptr(),
                1,
                dens.as_ptr(),
                1,
                1,
                &mut answer,
            )
        };
        assert_eq!(s, RATEWELL_UNAVAILABLE, "{}", last_error());
        assert!(!last_error().is_empty());
        assert!(answer.is_null());
        // The fetched tables still evaluate, from eight threads at once, with one thread's bits.
        let temps: Vec<f64> = (0..2_000).map(|i| 20.0 * 1.01f64.powi(i % 1_500)).collect();
        // SAFETY: live handle.
        let n = unsafe { ratewell_tables_count(tables) } * temps.len();
        let run = |tables: usize| {
            let (mut e, mut d, mut f) = (vec![0.0; n], vec![0.0; n], vec![0u32; n]);
            let eval = Eval {
                tables: tables as *const RatewellTables,
                temperatures: &temps,
                excitation: e.as_mut_ptr(),
                deexcitation: d.as_mut_ptr(),
                flags: f.as_mut_ptr(),
                length: n,
                outside: RATEWELL_EXTRAPOLATE,
            };
            assert_eq!(evaluate(&eval), RATEWELL_OK, "{}", last_error());
            (
                e.iter().map(|x| x.to_bits()).collect::<Vec<_>>(),
                d.iter().map(|x| x.to_bits()).collect::<Vec<_>>(),
                f,
            )
        };
        let address = tables as usize;
        let one = run(address);
        let results: Vec<_> = std::thread::scope(|scope| {
            let handles: Vec<_> = (0..8).map(|_| scope.spawn(|| run(address))).collect();
            handles.into_iter().map(|h| h.join().unwrap()).collect()
        });
        for r in results {
            assert!(r == one, "a thread got other bits");
        }
        // SAFETY: handles from the library, freed once.
        unsafe {
            ratewell_tables_free(tables);
            ratewell_close(connection);
        }
    })
    .await
    .unwrap();
}

#[test]
fn table_files_round_trip_and_damaged_ones_are_refused_through_the_abi() {
    let missing = c("/nonexistent/ratewell/x.rwtables");
    let mut out = null_mut();
    // SAFETY: valid string and out pointer.
    let s = unsafe { ratewell_tables_load(missing.as_ptr(), &mut out) };
    assert_eq!(s, RATEWELL_TABLE_FILE);
    assert!(
        last_error().starts_with("table file /nonexistent/ratewell/x.rwtables: cannot read"),
        "{}",
        last_error()
    );
    let dir = std::env::temp_dir().join(format!("ratewell-abi-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let junk = dir.join("junk.rwtables");
    std::fs::write(&junk, b"RWTABLES\x07\0\0\0\0\0\0\0\0\0\0\0").unwrap();
    let path = c(junk.to_str().unwrap());
    // SAFETY: valid string and out pointer.
    let s = unsafe { ratewell_tables_load(path.as_ptr(), &mut out) };
    assert_eq!(s, RATEWELL_TABLE_FILE);
    assert!(
        last_error().contains("format version 7, newer than this library reads"),
        "{}",
        last_error()
    );
    assert!(out.is_null());
    std::fs::remove_dir_all(&dir).unwrap();
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn options_carry_a_token_to_a_guarded_server_and_bad_keys_are_named() {
    use ratewell_e2e::server::{TEST_TOKEN, test_config};
    let config = ratewell_service::config::Config {
        auth_scope: ratewell_service::auth::Scope::All,
        ..test_config()
    };
    let server = TestServer::start_with(config).await;
    let url = server.url();
    tokio::task::spawn_blocking(move || {
        let dir = std::env::temp_dir().join(format!("ratewell-abi-token-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let token_file = dir.join("token");
        std::fs::write(&token_file, format!("{TEST_TOKEN}\n")).unwrap();
        let open = |options: &str| {
            let (url, id, opts) = (c(&url), c("demo"), c(options));
            let mut connection = null_mut();
            // SAFETY: valid strings and out pointer.
            let s = unsafe {
                ratewell_open_with_options(
                    url.as_ptr(),
                    id.as_ptr(),
                    null(),
                    null(),
                    20.0,
                    null(),
                    opts.as_ptr(),
                    &mut connection,
                )
            };
            (s, connection)
        };
        let fetch = |connection: *mut RatewellConnection| {
            let species = c("Mk III");
            let mut tables = null_mut();
            // SAFETY: live connection, valid string and out pointer.
            let s = unsafe { ratewell_fetch_tables(connection, species.as_ptr(), &mut tables) };
            // SAFETY: NULL or a handle from the library, freed once.
            unsafe { ratewell_tables_free(tables) };
            s
        };
        // No token: the server refuses, and the message says why.
        let (s, anonymous) = open("");
        assert_eq!(s, RATEWELL_OK, "{}", last_error());
        assert_eq!(fetch(anonymous), RATEWELL_SERVER_ERROR, "{}", last_error());
        assert!(last_error().contains("bearer token"), "{}", last_error());
        // The token from a file, among other settings.
        let (s, authed) = open(&format!(
            "token_file={}; wait_for_server_s=5; fall_back_to_fetched_tables=1",
            token_file.display()
        ));
        assert_eq!(s, RATEWELL_OK, "{}", last_error());
        assert_eq!(fetch(authed), RATEWELL_OK, "{}", last_error());
        // A bad key is named before anything is sent.
        let (s, none) = open("colour=blue");
        assert_eq!(s, RATEWELL_INVALID_ARGUMENT);
        assert!(none.is_null());
        assert!(
            last_error().starts_with("options = \"colour\": unknown key"),
            "{}",
            last_error()
        );
        // SAFETY: handles from the library, closed once.
        unsafe {
            ratewell_close(anonymous);
            ratewell_close(authed);
        }
        let _ = std::fs::remove_dir_all(&dir);
    })
    .await
    .unwrap();
}
