//! A server layer that gives transport-level failures the status a client can act on. tonic
//! answers a request body that does not decode (bad protobuf, bad framing, truncated) with
//! INTERNAL and a message over the message limit with OUT_OF_RANGE; here the first becomes
//! INVALID_ARGUMENT (the request is malformed; a retry cannot help) and the second
//! RESOURCE_EXHAUSTED naming the setting and how to split the request. The status is rewritten
//! where tonic puts it: in the response headers (trailers-only answers) and in the trailers.

use super::bounded::{MAX_MESSAGE_BYTES, bounded};
use bytes::Bytes;
use http::HeaderMap;
use http_body::{Body, Frame};
use std::future::Future;
use std::pin::Pin;
use std::task::{Context, Poll};
use tonic::{Code, Status};

/// Installs [`WireStatus`] around every route.
#[derive(Debug, Clone, Copy, Default)]
pub struct WireStatusLayer;

impl<S> tower_layer::Layer<S> for WireStatusLayer {
    type Service = WireStatus<S>;

    fn layer(&self, inner: S) -> WireStatus<S> {
        WireStatus(inner)
    }
}

/// The service [`WireStatusLayer`] makes.
#[derive(Debug, Clone)]
pub struct WireStatus<S>(S);

impl<S, ReqBody, ResBody> tower_service::Service<http::Request<ReqBody>> for WireStatus<S>
where
    S: tower_service::Service<http::Request<ReqBody>, Response = http::Response<ResBody>>,
    S::Future: Send + 'static,
    ResBody: Body<Data = Bytes> + Send + Unpin + 'static,
    ResBody::Error: Into<tonic::codegen::StdError>,
{
    type Response = http::Response<tonic::body::Body>;
    type Error = S::Error;
    type Future = Pin<Box<dyn Future<Output = Result<Self::Response, S::Error>> + Send>>;

    fn poll_ready(&mut self, cx: &mut Context<'_>) -> Poll<Result<(), S::Error>> {
        self.0.poll_ready(cx)
    }

    fn call(&mut self, request: http::Request<ReqBody>) -> Self::Future {
        let answer = self.0.call(request);
        Box::pin(async move {
            let (mut parts, body) = answer.await?.into_parts();
            rewrite(&mut parts.headers);
            Ok(http::Response::from_parts(
                parts,
                tonic::body::Body::new(Rewritten(body)),
            ))
        })
    }
}

/// A response body whose trailers pass through [`rewrite`].
struct Rewritten<B>(B);

impl<B: Body<Data = Bytes> + Unpin> Body for Rewritten<B> {
    type Data = Bytes;
    type Error = B::Error;

    fn poll_frame(
        mut self: Pin<&mut Self>,
        cx: &mut Context<'_>,
    ) -> Poll<Option<Result<Frame<Bytes>, B::Error>>> {
        match Pin::new(&mut self.0).poll_frame(cx) {
            Poll::Ready(Some(Ok(frame))) => Poll::Ready(Some(Ok(match frame.into_trailers() {
                Ok(mut trailers) => {
                    rewrite(&mut trailers);
                    Frame::trailers(trailers)
                }
                Err(frame) => frame,
            }))),
            other => other,
        }
    }

    fn is_end_stream(&self) -> bool {
        self.0.is_end_stream()
    }

    fn size_hint(&self) -> http_body::SizeHint {
        self.0.size_hint()
    }
}

/// Replaces a transport-level status in `map` by [`reclassify`]'s.
fn rewrite(map: &mut HeaderMap) {
    if !map.contains_key("grpc-status") {
        return;
    }
    let Some(status) = Status::from_header_map(map) else {
        return;
    };
    if let Some(better) = reclassify(status.code(), status.message()) {
        for name in ["grpc-status", "grpc-message", "grpc-status-details-bin"] {
            map.remove(name);
        }
        if better.add_header(map).is_err() {
            tracing::warn!("could not write a rewritten status");
        }
    }
}

/// The status a transport-level failure should have had; `None` for every other status.
pub fn reclassify(code: Code, message: &str) -> Option<Status> {
    let malformed = [
        "failed to decode Protobuf message",
        "protocol error: received message with",
        "Unexpected EOF decoding stream",
        "Error decompressing",
    ];
    match code {
        Code::Internal if malformed.iter().any(|p| message.starts_with(p)) => Some(Status::invalid_argument(
            bounded(&format!("malformed request body: {message}"), MAX_MESSAGE_BYTES),
        )),
        Code::OutOfRange if message.starts_with("Error, decoded message length too large") => {
            Some(Status::resource_exhausted(bounded(
                &format!(
                    "request over the message limit (setting `max_message_bytes`); split the request into smaller ones ({message})"
                ),
                MAX_MESSAGE_BYTES,
            )))
        }
        Code::OutOfRange if message.starts_with("Error, encoded message length too large") => {
            Some(Status::resource_exhausted(bounded(
                &format!(
                    "answer over the message limit (setting `max_message_bytes`); split the request into smaller ones ({message})"
                ),
                MAX_MESSAGE_BYTES,
            )))
        }
        _ => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn decode_failures_become_invalid_argument_and_others_are_kept() {
        let s = reclassify(
            Code::Internal,
            "failed to decode Protobuf message: invalid wire type value: 7",
        )
        .unwrap();
        assert_eq!(s.code(), Code::InvalidArgument);
        assert!(s.message().contains("invalid wire type"), "{}", s.message());
        let s = reclassify(
            Code::OutOfRange,
            "Error, encoded message length too large: found 9 bytes, the limit is: 8 bytes",
        )
        .unwrap();
        assert_eq!(s.code(), Code::ResourceExhausted);
        assert!(s.message().contains("max_message_bytes"));
        // Our own statuses pass unchanged.
        assert!(reclassify(Code::OutOfRange, "temperatures[0] = 1e12 K: outside the grid").is_none());
        assert!(reclassify(Code::Internal, "internal error while computing").is_none());
    }

    #[test]
    fn headers_are_rewritten_in_place() {
        let mut map = HeaderMap::new();
        Status::internal("failed to decode Protobuf message: buffer underflow")
            .add_header(&mut map)
            .unwrap();
        rewrite(&mut map);
        let s = Status::from_header_map(&map).unwrap();
        assert_eq!(s.code(), Code::InvalidArgument);
    }
}
