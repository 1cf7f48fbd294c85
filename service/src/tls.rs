//! TLS for the server (rustls through tonic): a certificate chain and private key from PEM
//! files. Errors name the file and the problem, never the file's contents.

use std::path::{Path, PathBuf};
use tonic::transport::{Identity, ServerTlsConfig};

/// Why the TLS files were refused.
#[derive(Debug, thiserror::Error)]
pub enum TlsError {
    /// A file could not be read.
    #[error("cannot read TLS {what} file {}: {source}", path.display())]
    Read {
        /// "certificate" or "key".
        what: &'static str,
        /// The file.
        path: PathBuf,
        /// The I/O error.
        source: std::io::Error,
    },
    /// A file holds no PEM block of the kind needed.
    #[error("TLS {what} file {} holds no PEM `{label}` block", path.display())]
    NoPem {
        /// "certificate" or "key".
        what: &'static str,
        /// The file.
        path: PathBuf,
        /// The PEM label looked for.
        label: &'static str,
    },
}

/// Reads `path` and checks it holds a PEM block whose label contains `label`.
fn read_pem(what: &'static str, path: &Path, label: &'static str) -> Result<Vec<u8>, TlsError> {
    let bytes = std::fs::read(path).map_err(|source| TlsError::Read {
        what,
        path: path.to_owned(),
        source,
    })?;
    let text = String::from_utf8_lossy(&bytes);
    let has_block = text
        .lines()
        .any(|l| l.starts_with("-----BEGIN ") && l.contains(label) && l.ends_with("-----"));
    if !has_block {
        return Err(TlsError::NoPem {
            what,
            path: path.to_owned(),
            label,
        });
    }
    Ok(bytes)
}

/// The server's TLS settings from a PEM certificate chain (leaf first) and its PEM private key
/// (PKCS#8, PKCS#1 or SEC1). rustls checks that they match when the server starts.
pub fn server_tls(cert_file: &Path, key_file: &Path) -> Result<ServerTlsConfig, TlsError> {
    let cert = read_pem("certificate", cert_file, "CERTIFICATE")?;
    let key = read_pem("key", key_file, "PRIVATE KEY")?;
    Ok(ServerTlsConfig::new().identity(Identity::from_pem(cert, key)))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn files_without_pem_blocks_are_named_not_shown() {
        let dir = std::env::temp_dir().join(format!("ratewell-tls-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let cert = dir.join("cert.pem");
        std::fs::write(&cert, "not-a-certificate secret-bytes\n").unwrap();
        let err = server_tls(&cert, &dir.join("key.pem")).unwrap_err();
        let text = err.to_string();
        assert!(
            text.contains("cert.pem") && text.contains("CERTIFICATE"),
            "{text}"
        );
        assert!(!text.contains("secret-bytes"), "{text}");
        let err = server_tls(&dir.join("missing.pem"), &cert).unwrap_err();
        assert!(
            matches!(
                err,
                TlsError::Read {
                    what: "certificate",
                    ..
                }
            ),
            "{err}"
        );
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
