//! The server as a real child process (the `ratewell-e2e-server` binary of this crate, which is
//! `ratewell-server` exactly), for what an in-process server cannot show: signals (SIGTERM,
//! SIGKILL, SIGSTOP) and the process exiting within its grace period.
//!
//! The child listens on 127.0.0.1:0 with JSON logs; its address is read from the "serving" log
//! line. Every log line is kept, so a test can look for an event after the fact.

use std::io::{BufRead, BufReader};
use std::net::SocketAddr;
use std::process::{Child, Command, ExitStatus, Stdio};
use std::sync::{Arc, Mutex, mpsc};
use std::time::{Duration, Instant};

/// The path of the `ratewell-e2e-server` binary; only integration tests of this crate know it
/// (Cargo sets `CARGO_BIN_EXE_*` for them alone), so the macro expands there.
#[macro_export]
macro_rules! server_binary {
    () => {
        env!("CARGO_BIN_EXE_ratewell-e2e-server")
    };
}

/// A loopback address that was free a moment ago (bound and released), for a server started
/// later on a known port.
pub fn free_loopback_address() -> SocketAddr {
    std::net::TcpListener::bind("127.0.0.1:0")
        .and_then(|l| l.local_addr())
        .expect("a free loopback port")
}

/// Longest wait for a child to print its "serving" line (debug build, loaded 2-core machine).
const START_TIMEOUT: Duration = Duration::from_secs(60);

/// A running server process; killed when dropped.
pub struct ServerProcess {
    child: Child,
    addr: SocketAddr,
    logs: Arc<Mutex<Vec<String>>>,
}

/// The signals the tests send.
#[derive(Debug, Clone, Copy)]
pub enum Signal {
    /// Graceful stop.
    Term,
    /// Death without warning.
    Kill,
    /// A hung process: alive, connections open, answering nothing.
    Stop,
    /// Resumes a stopped process.
    Cont,
}

impl ServerProcess {
    /// Starts the server `binary` with `args` (after `--listen 127.0.0.1:0 --json-logs`) and
    /// waits for it to serve. Integration tests pass [`server_binary!`](crate::server_binary).
    pub fn spawn(binary: &str, args: &[&str]) -> Self {
        Self::spawn_on(binary, "127.0.0.1:0", args)
    }

    /// [`Self::spawn`] listening on `listen` (for a client started before its server).
    pub fn spawn_on(binary: &str, listen: &str, args: &[&str]) -> Self {
        let mut child = Command::new(binary)
            .args(["--listen", listen, "--json-logs"])
            .args(args)
            .env_remove("RUST_LOG")
            .stdin(Stdio::null())
            .stdout(Stdio::piped())
            .stderr(Stdio::inherit())
            .spawn()
            .expect("start the server process");
        let stdout = child.stdout.take().expect("child stdout");
        let logs = Arc::new(Mutex::new(Vec::new()));
        let (ready_tx, ready_rx) = mpsc::channel::<SocketAddr>();
        let kept = Arc::clone(&logs);
        std::thread::spawn(move || {
            for line in BufReader::new(stdout).lines() {
                let Ok(line) = line else { break };
                if let Some(addr) = serving_address(&line) {
                    let _ = ready_tx.send(addr);
                }
                kept.lock().expect("logs").push(line);
            }
        });
        let addr = match ready_rx.recv_timeout(START_TIMEOUT) {
            Ok(addr) => addr,
            Err(_) => {
                let _ = child.kill();
                panic!(
                    "the server process did not serve within {START_TIMEOUT:?}: {:?}",
                    logs.lock().expect("logs")
                );
            }
        };
        Self { child, addr, logs }
    }

    /// The listen address.
    pub fn addr(&self) -> SocketAddr {
        self.addr
    }

    /// `http://<addr>`.
    pub fn url(&self) -> String {
        format!("http://{}", self.addr)
    }

    /// Sends `signal` to the process.
    pub fn signal(&self, signal: Signal) {
        let number = match signal {
            Signal::Term => libc::SIGTERM,
            Signal::Kill => libc::SIGKILL,
            Signal::Stop => libc::SIGSTOP,
            Signal::Cont => libc::SIGCONT,
        };
        let pid = libc::pid_t::try_from(self.child.id()).expect("pid fits pid_t");
        // SAFETY: kill(2) with a pid this process started and still owns (not yet reaped).
        let rc = unsafe { libc::kill(pid, number) };
        assert_eq!(rc, 0, "kill({pid}, {signal:?}) failed");
    }

    /// Waits up to `limit` for the process to exit; `None` if it is still running.
    pub fn wait_exit(&mut self, limit: Duration) -> Option<ExitStatus> {
        let started = Instant::now();
        loop {
            if let Some(status) = self.child.try_wait().expect("try_wait") {
                return Some(status);
            }
            if started.elapsed() >= limit {
                return None;
            }
            std::thread::sleep(Duration::from_millis(10));
        }
    }

    /// Every log line printed so far.
    pub fn logs(&self) -> Vec<String> {
        self.logs.lock().expect("logs").clone()
    }
}

impl Drop for ServerProcess {
    fn drop(&mut self) {
        // A stopped process must be resumed to die of SIGKILL promptly on every kernel.
        if self.child.try_wait().ok().flatten().is_none() {
            let _ = self.child.kill();
            if let Ok(pid) = libc::pid_t::try_from(self.child.id()) {
                // SAFETY: as in `signal`.
                unsafe { libc::kill(pid, libc::SIGCONT) };
            }
            let _ = self.child.wait();
        }
    }
}

/// The address of a JSON "serving" log line: its `listen` field reads "Some(127.0.0.1:PORT)".
fn serving_address(line: &str) -> Option<SocketAddr> {
    let event: serde_json::Value = serde_json::from_str(line).ok()?;
    let fields = event.get("fields")?;
    if fields.get("message")?.as_str()? != "serving" {
        return None;
    }
    let listen = fields.get("listen")?.as_str()?;
    listen
        .trim_start_matches("Some(")
        .trim_end_matches(')')
        .parse()
        .ok()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_address_is_read_from_the_serving_line_only() {
        let serving = r#"{"fields":{"message":"serving","listen":"Some(127.0.0.1:4242)"}}"#;
        assert_eq!(
            serving_address(serving),
            Some(SocketAddr::from(([127, 0, 0, 1], 4242)))
        );
        let other = r#"{"fields":{"message":"stopped","listen":"Some(127.0.0.1:4242)"}}"#;
        assert_eq!(serving_address(other), None);
        assert_eq!(serving_address("not json"), None);
    }
}
