//! The server process at SIGTERM during a long solve: the cut call is answered UNAVAILABLE
//! (the server is stopping; retry elsewhere), not a transport error, and the process exits
//! within its drain and shutdown grace plus a small margin, although the solve would have run
//! for far longer.

use ratewell_e2e::child::{ServerProcess, Signal};
use ratewell_e2e::requests::{
    BIG_SOLVE_AXIS, assert_status, big_solve, big_solve_answer_bytes, big_solve_axis_for, big_solve_of,
    in_flight,
};
use ratewell_e2e::server::CLIENT_MAX_MESSAGE_BYTES;
use ratewell_e2e::server_binary;
use ratewell_proto::pb::populations_client::PopulationsClient;
use ratewell_proto::pb::rates_client::RatesClient;
use std::time::{Duration, Instant};
use tonic::Code;
use tonic::transport::{Channel, Endpoint};

/// The process must exit within this of SIGTERM: the default drain (0.5 s) and
/// `--shutdown-grace-s 1`, plus half a second for the cut call's answer, closing connections,
/// the blocking pool's bounded wait and the exit itself on a loaded 2-core machine.
const EXIT_BOUND: Duration = Duration::from_secs(2);

/// The full solve takes at least this many times [`EXIT_BOUND`].
const FULL_PER_BOUND: u32 = 5;

fn channel(server: &ServerProcess) -> Channel {
    Endpoint::from_shared(server.url()).expect("url").connect_lazy()
}

fn populations(server: &ServerProcess) -> PopulationsClient<Channel> {
    PopulationsClient::new(channel(server)).max_decoding_message_size(CLIENT_MAX_MESSAGE_BYTES)
}

/// How long [`big_solve`] takes in a server process here and now.
async fn time_big_solve_in_a_process() -> Duration {
    let server = ServerProcess::spawn(server_binary!(), &[]);
    let mut client = populations(&server);
    let began = Instant::now();
    let answer = client
        .solve_populations(big_solve())
        .await
        .expect("the big solve")
        .into_inner();
    assert_eq!(answer.points.len(), BIG_SOLVE_AXIS * BIG_SOLVE_AXIS);
    began.elapsed()
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn sigterm_during_a_long_solve_answers_unavailable_and_exits_within_the_grace() {
    let measured = time_big_solve_in_a_process().await;
    let axis = big_solve_axis_for(measured, EXIT_BOUND * FULL_PER_BOUND);
    let points = axis * axis;
    let (max_points, max_bytes) = (points.to_string(), big_solve_answer_bytes(points).to_string());
    let server = ServerProcess::spawn(
        server_binary!(),
        &[
            // One engine call at a time, so a probe sees the solve in flight.
            "--max-in-flight",
            "1",
            "--shutdown-grace-s",
            "1",
            // The solve is far shorter than the request timeout: only the grace can end it.
            "--request-timeout-s",
            "600",
            "--max-solve-points",
            &max_points,
            "--max-message-bytes",
            &max_bytes,
        ],
    );
    let start = || {
        let mut client = populations(&server);
        tokio::spawn(async move { client.solve_populations(big_solve_of(axis)).await.map(|_| ()) })
    };
    let call = in_flight(RatesClient::new(channel(&server)), start).await;

    server.signal(Signal::Term);
    let signalled = Instant::now();
    let status = tokio::time::timeout(EXIT_BOUND, call)
        .await
        .expect("the cut call is answered within the bound")
        .expect("call task")
        .expect_err("cut at the end of the grace");
    let answered = signalled.elapsed();
    assert_status(
        &status,
        Code::Unavailable,
        &["server stopping", "retry on another endpoint"],
    );

    let mut server = server;
    let exit = tokio::task::spawn_blocking(move || {
        let exit = server.wait_exit(EXIT_BOUND.saturating_sub(signalled.elapsed()));
        (exit, server.logs())
    });
    let (exit, logs) = exit.await.expect("wait task");
    let exited = signalled.elapsed();
    let exit = exit.unwrap_or_else(|| {
        panic!("the process still runs {exited:?} after SIGTERM (answered after {answered:?}): {logs:?}")
    });
    assert!(exit.success(), "{exit:?}: {logs:?}");
    assert!(exited <= EXIT_BOUND, "{exited:?}");
    assert!(
        logs.iter().any(|l| l.contains("cutting them")),
        "the solve was still running when the grace ran out: {logs:?}"
    );
}
