//! Lingering close for accepted connections, so the last answer on a connection is not lost.
//!
//! When a socket is closed while its receive buffer still holds bytes from the peer (an HTTP/2
//! WINDOW_UPDATE or PING that crossed the final response on the wire), the kernel answers with
//! a TCP reset instead of a FIN, and a reset makes the peer discard response bytes it has
//! received but not yet read: the client sees "connection reset" in place of the tail of its
//! answer. That happens exactly at a graceful stop, when the server closes connections right
//! after their last response. The remedy is common practice (no source): half-close the write
//! side, read and discard until the peer closes or a short bound passes, then close.

use std::io;
use std::pin::Pin;
use std::task::{Context, Poll};
use std::time::Duration;
use tokio::io::{AsyncRead, AsyncReadExt, AsyncWrite, AsyncWriteExt, ReadBuf};
use tokio::net::TcpStream;
use tokio_util::task::TaskTracker;
use tonic::transport::server::{Connected, TcpConnectInfo};

/// How long a closed connection is drained at most before its socket is dropped.
pub const LINGER: Duration = Duration::from_secs(1);

/// An accepted TCP stream whose drop half-closes it and drains the peer's last bytes in a task
/// on `tracker` (so the server can wait for the drains before it returns).
pub struct LingeringStream {
    inner: Option<TcpStream>,
    tracker: TaskTracker,
}

impl LingeringStream {
    /// Wraps `stream`; its lingering close is tracked by `tracker`.
    pub fn new(stream: TcpStream, tracker: TaskTracker) -> Self {
        Self {
            inner: Some(stream),
            tracker,
        }
    }

    fn stream(&mut self) -> io::Result<&mut TcpStream> {
        self.inner
            .as_mut()
            .ok_or_else(|| io::Error::from(io::ErrorKind::NotConnected))
    }
}

/// Half-closes `stream`, then discards what the peer still sends until it closes, fails or
/// `LINGER` passes.
async fn drain(mut stream: TcpStream) {
    let _ = stream.shutdown().await;
    let mut sink = [0u8; 4096];
    let _ = tokio::time::timeout(LINGER, async {
        while let Ok(n) = stream.read(&mut sink).await {
            if n == 0 {
                break;
            }
        }
    })
    .await;
}

impl Drop for LingeringStream {
    fn drop(&mut self) {
        let Some(stream) = self.inner.take() else {
            return;
        };
        // Outside a runtime (never the case inside the server) the socket simply closes.
        if let Ok(runtime) = tokio::runtime::Handle::try_current() {
            self.tracker.spawn_on(drain(stream), &runtime);
        }
    }
}

impl AsyncRead for LingeringStream {
    fn poll_read(self: Pin<&mut Self>, cx: &mut Context<'_>, buf: &mut ReadBuf<'_>) -> Poll<io::Result<()>> {
        Pin::new(self.get_mut().stream()?).poll_read(cx, buf)
    }
}

impl AsyncWrite for LingeringStream {
    fn poll_write(self: Pin<&mut Self>, cx: &mut Context<'_>, buf: &[u8]) -> Poll<io::Result<usize>> {
        Pin::new(self.get_mut().stream()?).poll_write(cx, buf)
    }

    fn poll_write_vectored(
        self: Pin<&mut Self>,
        cx: &mut Context<'_>,
        bufs: &[io::IoSlice<'_>],
    ) -> Poll<io::Result<usize>> {
        Pin::new(self.get_mut().stream()?).poll_write_vectored(cx, bufs)
    }

    fn is_write_vectored(&self) -> bool {
        self.inner.as_ref().is_some_and(|s| s.is_write_vectored())
    }

    fn poll_flush(self: Pin<&mut Self>, cx: &mut Context<'_>) -> Poll<io::Result<()>> {
        Pin::new(self.get_mut().stream()?).poll_flush(cx)
    }

    fn poll_shutdown(self: Pin<&mut Self>, cx: &mut Context<'_>) -> Poll<io::Result<()>> {
        Pin::new(self.get_mut().stream()?).poll_shutdown(cx)
    }
}

impl Connected for LingeringStream {
    type ConnectInfo = TcpConnectInfo;

    fn connect_info(&self) -> TcpConnectInfo {
        match &self.inner {
            Some(stream) => stream.connect_info(),
            None => TcpConnectInfo {
                local_addr: None,
                remote_addr: None,
            },
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use tokio::net::TcpListener;

    /// A peer whose last bytes are still unread when the server side drops its stream gets a
    /// FIN, not a reset, so it reads every byte the server wrote before the close.
    #[tokio::test]
    async fn bytes_in_flight_from_the_peer_do_not_reset_the_connection() {
        let listener = TcpListener::bind("127.0.0.1:0").await.expect("bind");
        let addr = listener.local_addr().expect("addr");
        let tracker = TaskTracker::new();
        let mut peer = TcpStream::connect(addr).await.expect("connect");
        let (accepted, _) = listener.accept().await.expect("accept");
        let mut server = LingeringStream::new(accepted, tracker.clone());
        // The peer's bytes arrive and sit unread in the server's receive buffer.
        peer.write_all(&[7u8; 1000]).await.expect("peer writes");
        tokio::time::sleep(Duration::from_millis(50)).await;
        let answer = vec![42u8; 256 * 1024];
        let writer = tokio::spawn(async move {
            server.write_all(&answer).await.expect("server writes");
            server.flush().await.expect("flush");
            drop(server);
        });
        // Let the server finish writing and drop before the peer reads anything.
        let mut received = Vec::new();
        tokio::time::sleep(Duration::from_millis(100)).await;
        peer.read_to_end(&mut received)
            .await
            .expect("the peer reads to a clean end of stream, not a reset");
        writer.await.expect("writer");
        assert_eq!(received.len(), 256 * 1024);
        tracker.close();
        tokio::time::timeout(LINGER * 2, tracker.wait())
            .await
            .expect("the drain ends once the peer closes");
    }
}
