//! Connection admission at the transport: at most `max_connections` connections are served at
//! once (further ones are closed at accept, with a rate-limited warning), and a connection must
//! send the 24-byte HTTP/2 client preface within `handshake_timeout` or it is closed. Without
//! these, idle TCP connections that never speak HTTP/2 hold file descriptors and server tasks
//! until the process runs out of descriptors and every caller is locked out.

use std::future::Future;
use std::io;
use std::net::SocketAddr;
use std::pin::Pin;
use std::sync::Arc;
use std::sync::Mutex;
use std::sync::atomic::{AtomicU64, Ordering};
use std::task::{Context, Poll};
use std::time::{Duration, Instant};
use tokio::io::{AsyncRead, AsyncWrite, ReadBuf};
use tokio::sync::{OwnedSemaphorePermit, Semaphore};
use tokio::time::Sleep;
use tonic::transport::server::Connected;

/// Length of the HTTP/2 client connection preface (RFC 9113, section 3.4).
const PREFACE_BYTES: usize = 24;
/// Shortest interval between two warnings of one kind.
const LOG_INTERVAL: Duration = Duration::from_secs(10);

/// A warning logged at most once per [`LOG_INTERVAL`], with the count of the events since the
/// last one.
#[derive(Debug, Default)]
pub struct RateLimitedWarning {
    last: Mutex<Option<Instant>>,
    since_last: AtomicU64,
    total: AtomicU64,
}

impl RateLimitedWarning {
    /// Counts one event; returns the events since the last warning when one is due now.
    pub fn due(&self) -> Option<u64> {
        self.total.fetch_add(1, Ordering::Relaxed);
        let pending = self.since_last.fetch_add(1, Ordering::Relaxed) + 1;
        let mut last = self.last.lock().unwrap_or_else(|p| p.into_inner());
        let now = Instant::now();
        if last.is_some_and(|t| now.duration_since(t) < LOG_INTERVAL) {
            return None;
        }
        *last = Some(now);
        self.since_last.fetch_sub(pending, Ordering::Relaxed);
        Some(pending)
    }

    /// Events counted since start.
    pub fn total(&self) -> u64 {
        self.total.load(Ordering::Relaxed)
    }
}

/// Admits connections under the connection limit. Shared by the accept loop.
#[derive(Debug)]
pub struct ConnectionGate {
    permits: Arc<Semaphore>,
    max_connections: usize,
    handshake_timeout: Duration,
    refused: RateLimitedWarning,
    timed_out: Arc<RateLimitedWarning>,
}

impl ConnectionGate {
    /// A gate for `max_connections` connections, each with `handshake_timeout` to send the
    /// HTTP/2 preface.
    pub fn new(max_connections: u64, handshake_timeout: Duration) -> Arc<Self> {
        let max_connections = usize::try_from(max_connections)
            .unwrap_or(usize::MAX)
            .min(Semaphore::MAX_PERMITS);
        Arc::new(Self {
            permits: Arc::new(Semaphore::new(max_connections)),
            max_connections,
            handshake_timeout,
            refused: RateLimitedWarning::default(),
            timed_out: Arc::new(RateLimitedWarning::default()),
        })
    }

    /// The stream `make` builds, admitted; `None` when the limit is reached (`make` is not
    /// called, so the caller's socket is simply dropped, closing it at once).
    pub fn admit<S>(&self, peer: Option<SocketAddr>, make: impl FnOnce() -> S) -> Option<GatedStream<S>> {
        match Arc::clone(&self.permits).try_acquire_owned() {
            Ok(permit) => Some(GatedStream {
                inner: make(),
                _permit: permit,
                preface_left: PREFACE_BYTES,
                handshake: Some(Box::pin(tokio::time::sleep(self.handshake_timeout))),
                timed_out: Arc::clone(&self.timed_out),
                peer,
            }),
            Err(_) => {
                if let Some(count) = self.refused.due() {
                    tracing::warn!(
                        peer = ?peer,
                        refused_since_last_warning = count,
                        max_connections = self.max_connections,
                        "connection limit reached: new connections are closed at accept (setting max_connections)"
                    );
                }
                None
            }
        }
    }

    /// Connections served now.
    pub fn open(&self) -> usize {
        self.max_connections - self.permits.available_permits()
    }

    /// Connections refused at the limit since start.
    pub fn refused(&self) -> u64 {
        self.refused.total()
    }

    /// Connections closed for not sending the preface in time since start.
    pub fn timed_out(&self) -> u64 {
        self.timed_out.total()
    }
}

/// An admitted connection: holds its place under the limit until dropped, and fails its reads
/// if the HTTP/2 preface has not arrived within the handshake timeout.
pub struct GatedStream<S> {
    inner: S,
    _permit: OwnedSemaphorePermit,
    preface_left: usize,
    handshake: Option<Pin<Box<Sleep>>>,
    timed_out: Arc<RateLimitedWarning>,
    peer: Option<SocketAddr>,
}

impl<S: AsyncRead + Unpin> AsyncRead for GatedStream<S> {
    fn poll_read(self: Pin<&mut Self>, cx: &mut Context<'_>, buf: &mut ReadBuf<'_>) -> Poll<io::Result<()>> {
        let this = self.get_mut();
        let before = buf.filled().len();
        let polled = Pin::new(&mut this.inner).poll_read(cx, buf);
        let Some(handshake) = this.handshake.as_mut() else {
            return polled;
        };
        if let Poll::Ready(Ok(())) = &polled {
            let read = buf.filled().len() - before;
            this.preface_left = this.preface_left.saturating_sub(read);
            if this.preface_left == 0 || read == 0 {
                this.handshake = None;
            }
            return polled;
        }
        if polled.is_pending() && handshake.as_mut().poll(cx).is_ready() {
            this.handshake = None;
            if let Some(count) = this.timed_out.due() {
                tracing::warn!(
                    peer = ?this.peer,
                    closed_since_last_warning = count,
                    "connection closed: no HTTP/2 preface within the handshake timeout (setting handshake_timeout_s)"
                );
            }
            return Poll::Ready(Err(io::Error::new(
                io::ErrorKind::TimedOut,
                "no HTTP/2 preface within the handshake timeout",
            )));
        }
        polled
    }
}

impl<S: AsyncWrite + Unpin> AsyncWrite for GatedStream<S> {
    fn poll_write(self: Pin<&mut Self>, cx: &mut Context<'_>, buf: &[u8]) -> Poll<io::Result<usize>> {
        Pin::new(&mut self.get_mut().inner).poll_write(cx, buf)
    }

    fn poll_write_vectored(
        self: Pin<&mut Self>,
        cx: &mut Context<'_>,
        bufs: &[io::IoSlice<'_>],
    ) -> Poll<io::Result<usize>> {
        Pin::new(&mut self.get_mut().inner).poll_write_vectored(cx, bufs)
    }

    fn is_write_vectored(&self) -> bool {
        self.inner.is_write_vectored()
    }

    fn poll_flush(self: Pin<&mut Self>, cx: &mut Context<'_>) -> Poll<io::Result<()>> {
        Pin::new(&mut self.get_mut().inner).poll_flush(cx)
    }

    fn poll_shutdown(self: Pin<&mut Self>, cx: &mut Context<'_>) -> Poll<io::Result<()>> {
        Pin::new(&mut self.get_mut().inner).poll_shutdown(cx)
    }
}

impl<S: Connected> Connected for GatedStream<S> {
    type ConnectInfo = S::ConnectInfo;

    fn connect_info(&self) -> S::ConnectInfo {
        self.inner.connect_info()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use tokio::io::{AsyncReadExt, AsyncWriteExt};

    #[tokio::test]
    async fn the_limit_refuses_and_frees_places() {
        let gate = ConnectionGate::new(2, Duration::from_secs(5));
        let a = gate.admit(None, tokio::io::empty);
        let b = gate.admit(None, tokio::io::empty);
        assert!(a.is_some() && b.is_some());
        assert!(gate.admit(None, tokio::io::empty).is_none());
        assert_eq!((gate.open(), gate.refused()), (2, 1));
        drop(a);
        assert!(gate.admit(None, tokio::io::empty).is_some());
    }

    #[tokio::test]
    async fn a_silent_peer_times_out_and_a_speaking_one_does_not() {
        let gate = ConnectionGate::new(4, Duration::from_millis(100));
        let (_silent_peer, silent) = tokio::io::duplex(64);
        let mut silent = gate.admit(None, || silent).unwrap();
        let started = Instant::now();
        let err = silent.read(&mut [0u8; 8]).await.unwrap_err();
        assert_eq!(err.kind(), io::ErrorKind::TimedOut);
        assert!(started.elapsed() >= Duration::from_millis(100));
        assert_eq!(gate.timed_out(), 1);

        let (mut peer, speaking) = tokio::io::duplex(64);
        let mut speaking = gate.admit(None, || speaking).unwrap();
        peer.write_all(b"PRI * HTTP/2.0\r\n\r\nSM\r\n\r\n").await.unwrap();
        let mut preface = [0u8; 24];
        speaking.read_exact(&mut preface).await.unwrap();
        // Past the preface the connection may stay quiet as long as it likes.
        let quiet = tokio::time::timeout(Duration::from_millis(300), speaking.read(&mut [0u8; 1])).await;
        assert!(quiet.is_err(), "a read after the preface must wait, not fail");
    }

    #[test]
    fn warnings_are_rate_limited_and_counted() {
        let w = RateLimitedWarning::default();
        assert_eq!(w.due(), Some(1));
        for _ in 0..99 {
            assert_eq!(w.due(), None);
        }
        assert_eq!(w.total(), 100);
    }
}
