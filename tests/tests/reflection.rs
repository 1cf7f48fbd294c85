//! gRPC server reflection end to end: v1 (and v1alpha, for older tools) list the ratewell
//! services and standard health checking, and serve the descriptors of the contract; the
//! benchmark-only Transport service answers only when enabled.

use prost::Message;
use ratewell_e2e::requests::{assert_status, refused};
use ratewell_e2e::{TestServer, test_config};
use ratewell_proto::pb;
use tonic::Code;
use tonic_reflection::pb::v1::server_reflection_client::ServerReflectionClient;
use tonic_reflection::pb::v1::server_reflection_request::MessageRequest;
use tonic_reflection::pb::v1::server_reflection_response::MessageResponse;
use tonic_reflection::pb::v1::{ServerReflectionRequest, ServerReflectionResponse};
use tonic_reflection::pb::v1alpha;

/// The services a default server serves.
const SERVED: [&str; 7] = [
    "ratewell.v1.Catalogue",
    "ratewell.v1.Rates",
    "ratewell.v1.Populations",
    "ratewell.v1.Consistency",
    "ratewell.v1.Admin",
    "grpc.health.v1.Health",
    "grpc.reflection.v1.ServerReflection",
];

async fn reflect(server: &TestServer, request: MessageRequest) -> ServerReflectionResponse {
    try_reflect(server, request).await.expect("reflection answer")
}

async fn try_reflect(
    server: &TestServer,
    request: MessageRequest,
) -> Result<ServerReflectionResponse, tonic::Status> {
    let mut client = ServerReflectionClient::new(server.channel());
    let message = ServerReflectionRequest {
        host: String::new(),
        message_request: Some(request),
    };
    let mut answers = client
        .server_reflection_info(tokio_stream::iter(vec![message]))
        .await
        .expect("reflection stream")
        .into_inner();
    Ok(answers.message().await?.expect("one answer per request"))
}

async fn listed(server: &TestServer) -> Vec<String> {
    match reflect(server, MessageRequest::ListServices(String::new()))
        .await
        .message_response
    {
        Some(MessageResponse::ListServicesResponse(list)) => {
            list.service.into_iter().map(|s| s.name).collect()
        }
        other => panic!("expected a service list, got {other:?}"),
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn v1_lists_the_ratewell_services_and_health() {
    let server = TestServer::start().await;
    let names = listed(&server).await;
    for service in SERVED {
        assert!(names.iter().any(|n| n == service), "{service} not in {names:?}");
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn v1_serves_the_file_descriptor_of_a_service() {
    let server = TestServer::start().await;
    let answer = reflect(
        &server,
        MessageRequest::FileContainingSymbol("ratewell.v1.Rates".into()),
    )
    .await;
    let Some(MessageResponse::FileDescriptorResponse(files)) = answer.message_response else {
        panic!("expected file descriptors, got {:?}", answer.message_response);
    };
    let decoded: Vec<prost_types::FileDescriptorProto> = files
        .file_descriptor_proto
        .iter()
        .map(|b| prost_types::FileDescriptorProto::decode(b.as_slice()).expect("a descriptor"))
        .collect();
    let rates = decoded
        .iter()
        .find(|f| f.name() == "ratewell/v1/rates.proto")
        .expect("rates.proto served");
    let methods: Vec<&str> = rates.service[0].method.iter().map(|m| m.name()).collect();
    assert_eq!(methods, ["FetchTables", "LookupRates", "LookupRatesStream"]);

    // An unknown symbol is NOT_FOUND (tonic-reflection ends the stream with that status
    // rather than sending an ErrorResponse message).
    let status = try_reflect(
        &server,
        MessageRequest::FileContainingSymbol("ratewell.v1.Nothing".into()),
    )
    .await
    .expect_err("unknown symbol");
    assert_status(&status, Code::NotFound, &["ratewell.v1.Nothing"]);
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn v1alpha_lists_the_same_services_for_older_tools() {
    let server = TestServer::start().await;
    let mut client = v1alpha::server_reflection_client::ServerReflectionClient::new(server.channel());
    let message = v1alpha::ServerReflectionRequest {
        host: String::new(),
        message_request: Some(v1alpha::server_reflection_request::MessageRequest::ListServices(
            String::new(),
        )),
    };
    let mut answers = client
        .server_reflection_info(tokio_stream::iter(vec![message]))
        .await
        .expect("v1alpha stream")
        .into_inner();
    let answer = answers.message().await.expect("answer").expect("one answer");
    let Some(v1alpha::server_reflection_response::MessageResponse::ListServicesResponse(list)) =
        answer.message_response
    else {
        panic!("expected a service list");
    };
    let names: Vec<String> = list.service.into_iter().map(|s| s.name).collect();
    for service in ["ratewell.v1.Rates", "grpc.health.v1.Health"] {
        assert!(names.iter().any(|n| n == service), "{service} not in {names:?}");
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn transport_is_served_only_with_benchmark_endpoints() {
    let server = TestServer::start().await;
    let status = refused(server.transport().ping(pb::PingRequest {}).await);
    assert_status(&status, Code::Unimplemented, &[]);

    let config = ratewell_service::config::Config {
        benchmark_endpoints: true,
        ..test_config()
    };
    let bench = TestServer::start_with(config).await;
    bench.transport().ping(pb::PingRequest {}).await.expect("ping");
    let payload = vec![1.5, -0.0, f64::MAX, f64::MIN_POSITIVE];
    let echoed = bench
        .transport()
        .echo(pb::EchoRequest {
            payload: payload.clone(),
        })
        .await
        .expect("echo")
        .into_inner()
        .payload;
    let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
    assert_eq!(bits(&echoed), bits(&payload));
    assert!(listed(&bench).await.iter().any(|n| n == "ratewell.v1.Transport"));
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn reflection_lists_only_services_that_are_served() {
    let server = TestServer::start().await;
    let names = listed(&server).await;
    assert!(
        !names.iter().any(|n| n == "ratewell.v1.Transport"),
        "Transport is not served but listed: {names:?}"
    );
}
