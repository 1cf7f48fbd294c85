//! Benchmark-only Transport service (empty and echo RPCs), the transport floor that lookups
//! are measured against. Registered only when benchmark endpoints are enabled.

use ratewell_proto::pb::{self, transport_server::Transport};
use tonic::{Request, Response, Status};

/// Handler of the Transport service.
#[derive(Clone, Default)]
pub struct TransportHandler;

#[tonic::async_trait]
impl Transport for TransportHandler {
    async fn ping(&self, _request: Request<pb::PingRequest>) -> Result<Response<pb::PingResponse>, Status> {
        Ok(Response::new(pb::PingResponse {}))
    }

    async fn echo(&self, request: Request<pb::EchoRequest>) -> Result<Response<pb::EchoResponse>, Status> {
        Ok(Response::new(pb::EchoResponse {
            payload: request.into_inner().payload,
        }))
    }
}
