//! LookupRatesStream end to end: each request message gets its own answer, in order, while the
//! stream stays open (the next request is sent only after the previous answer arrived); every
//! answer equals the unary LookupRates of the same request; a bad message ends the stream with
//! its status after the good answers.

use ratewell_e2e::TestServer;
use ratewell_e2e::requests::{MK_II, MK_III, assert_status, key, log_spaced, lookup, selector};
use ratewell_proto::pb;
use tonic::Code;

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn each_message_is_answered_before_the_next_is_sent() {
    let server = TestServer::start().await;
    let mut requests = vec![
        lookup(MK_III, log_spaced(1e3, 1e6, 7)),
        lookup(MK_II, log_spaced(5e3, 5e4, 3)),
        lookup(MK_III, vec![1e4]),
    ];
    requests[2].transitions = vec![key(4, 1), key(5, 2)];
    requests[2].direction = pb::Direction::Excitation as i32;

    let (tx, mut answers) = server.open_lookup_stream(1).await;
    for req in &requests {
        tx.send(req.clone()).await.expect("send");
        let streamed = answers
            .message()
            .await
            .expect("an answer")
            .expect("the stream stays open");
        let unary = server
            .rates()
            .lookup_rates(req.clone())
            .await
            .expect("unary")
            .into_inner();
        assert_eq!(streamed.species, req.species);
        let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
        assert_eq!(bits(&streamed.excitation), bits(&unary.excitation));
        assert_eq!(bits(&streamed.deexcitation), bits(&unary.deexcitation));
        assert_eq!(streamed.transitions, unary.transitions);
        assert_eq!(streamed.flags, unary.flags);
        assert_eq!(streamed.stamp, unary.stamp);
        assert_eq!(streamed.temperature_count as usize, req.temperatures.len());
    }
    drop(tx);
    assert!(
        answers.message().await.expect("clean end").is_none(),
        "closing the request stream ends the answers"
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_bad_message_ends_the_stream_with_its_status() {
    let server = TestServer::start().await;
    let (tx, mut answers) = server.open_lookup_stream(1).await;
    tx.send(lookup(MK_III, vec![1e4])).await.expect("send");
    answers.message().await.expect("good answer").expect("open");
    tx.send(lookup(MK_III, vec![1e4, f64::NAN])).await.expect("send");
    let status = answers.message().await.expect_err("the bad message's status");
    assert_status(
        &status,
        Code::InvalidArgument,
        &["temperatures[1] = NaN K", "must be finite and > 0"],
    );

    // A pinned hash that differs is refused inside a stream too.
    let (tx, mut answers) = server.open_lookup_stream(1).await;
    let mut req = lookup(MK_III, vec![1e4]);
    let mut pinned = selector("demo", "");
    pinned.expected_content_hash = "0".repeat(64);
    req.dataset = Some(pinned);
    tx.send(req).await.expect("send");
    let status = answers.message().await.expect_err("refused");
    assert_status(&status, Code::FailedPrecondition, &["content hash"]);
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn an_empty_request_stream_gets_an_empty_answer_stream() {
    let server = TestServer::start().await;
    let mut answers = server
        .rates()
        .lookup_rates_stream(tokio_stream::iter(Vec::<pb::LookupRatesRequest>::new()))
        .await
        .expect("stream opened")
        .into_inner();
    assert!(answers.message().await.expect("clean end").is_none());
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn many_messages_sent_at_once_are_answered_in_order() {
    let server = TestServer::start().await;
    let temps: Vec<Vec<f64>> = (0..40)
        .map(|i| vec![1e3 * (1.0 + i as f64), 2e4 + 100.0 * i as f64])
        .collect();
    let requests: Vec<pb::LookupRatesRequest> = temps.iter().map(|t| lookup(MK_III, t.clone())).collect();
    let mut answers = server
        .rates()
        .lookup_rates_stream(tokio_stream::iter(requests.clone()))
        .await
        .expect("stream opened")
        .into_inner();
    let mut n = 0;
    while let Some(answer) = answers.message().await.expect("answer") {
        let unary = server
            .rates()
            .lookup_rates(requests[n].clone())
            .await
            .expect("unary")
            .into_inner();
        assert_eq!(answer.deexcitation, unary.deexcitation, "message {n}");
        n += 1;
    }
    assert_eq!(n, requests.len(), "one answer per message");
}
