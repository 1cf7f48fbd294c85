//! Connection settings written as text, `key=value` pairs separated by `;` or new lines, for
//! callers that cannot build a [`ClientConfig`] field by field (the C ABI and the languages
//! over it). One parser, so every language accepts the same keys with the same checks.
//!
//! Keys: `token_file`, `tls_ca_file`, `tls_server_name`, `wait_for_server_s`,
//! `call_timeout_s`, `fall_back_to_fetched_tables` (`true`/`false`/`1`/`0`),
//! `pin_tables_digest` (64 hex digits; needs the configuration's dataset).

use crate::config::{ClientConfig, TlsSettings};
use crate::error::ClientError;
use std::time::Duration;

/// Every key [`apply_options`] accepts.
pub const OPTION_KEYS: &[&str] = &[
    "token_file",
    "tls_ca_file",
    "tls_server_name",
    "wait_for_server_s",
    "call_timeout_s",
    "fall_back_to_fetched_tables",
    "pin_tables_digest",
];

/// Longest time accepted by the `*_s` keys, seconds (one day).
const MAX_SECONDS: f64 = 86_400.0;

/// `config` with the settings of `text` applied (empty text: unchanged). A bad pair is
/// refused naming its key, its value and what is allowed; a token file's content is never
/// echoed.
pub fn apply_options(mut config: ClientConfig, text: &str) -> Result<ClientConfig, ClientError> {
    let mut server_name: Option<String> = None;
    for pair in text.split([';', '\n']).map(str::trim).filter(|p| !p.is_empty()) {
        let (key, value) = pair.split_once('=').ok_or_else(|| {
            ClientError::invalid("options", format!("{pair:?}"), "each setting must be key=value")
        })?;
        let (key, value) = (key.trim(), value.trim());
        let field = format!("options.{key}");
        let seconds = |v: &str| -> Result<Duration, ClientError> {
            let s: f64 = v
                .parse()
                .map_err(|_| ClientError::invalid(&field, format!("{v:?}"), "must be a number of seconds"))?;
            if !(s.is_finite() && (0.0..=MAX_SECONDS).contains(&s)) {
                return Err(ClientError::invalid(&field, s, "must be within [0, 86400] s"));
            }
            Ok(Duration::from_secs_f64(s))
        };
        match key {
            "token_file" => config = config.with_token_file(value)?,
            "tls_ca_file" => config = config.with_tls(TlsSettings::new(value)),
            "tls_server_name" => server_name = Some(value.to_string()),
            "pin_tables_digest" => {
                let dataset = config.dataset.take().ok_or_else(|| {
                    ClientError::invalid(&field, format!("{value:?}"), "needs a dataset to pin")
                })?;
                config.dataset = Some(dataset.pin_tables_digest(value)?);
            }
            "wait_for_server_s" => config = config.with_wait_for_server(seconds(value)?),
            "call_timeout_s" => {
                let t = seconds(value)?;
                if t.is_zero() {
                    return Err(ClientError::invalid(&field, 0, "must be > 0 s"));
                }
                config = config.with_call_timeout(t);
            }
            "fall_back_to_fetched_tables" => {
                config.fall_back_to_fetched_tables = match value {
                    "true" | "1" => true,
                    "false" | "0" => false,
                    other => {
                        return Err(ClientError::invalid(
                            &field,
                            format!("{other:?}"),
                            "must be true, false, 1 or 0",
                        ));
                    }
                }
            }
            other => {
                return Err(ClientError::invalid(
                    "options",
                    format!("{other:?}"),
                    format!("unknown key; the keys are {}", OPTION_KEYS.join(", ")),
                ));
            }
        }
    }
    if let Some(name) = server_name {
        match config.tls.as_mut() {
            Some(tls) => tls.server_name = Some(name),
            None => {
                return Err(ClientError::invalid(
                    "options.tls_server_name",
                    format!("{name:?}"),
                    "needs tls_ca_file as well",
                ));
            }
        }
    }
    Ok(config)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_key_is_applied_and_bad_pairs_are_named() {
        let c = apply_options(
            ClientConfig::default(),
            "tls_ca_file = /ca.pem; tls_server_name=svc\nwait_for_server_s=90;call_timeout_s=2.5;fall_back_to_fetched_tables=1;",
        )
        .unwrap();
        let tls = c.tls.as_ref().unwrap();
        assert_eq!(tls.ca_file, std::path::PathBuf::from("/ca.pem"));
        assert_eq!(tls.server_name.as_deref(), Some("svc"));
        assert_eq!(c.wait_for_server, Duration::from_secs(90));
        assert_eq!(c.call_timeout, Duration::from_millis(2500));
        assert!(c.fall_back_to_fetched_tables);
        assert!(apply_options(ClientConfig::default(), "").is_ok());

        let err = |text: &str| {
            apply_options(ClientConfig::default(), text)
                .unwrap_err()
                .to_string()
        };
        assert!(err("colour=blue").starts_with("options = \"colour\": unknown key; the keys are token_file"));
        assert_eq!(
            err("wait_for_server_s=-1"),
            "options.wait_for_server_s = -1: must be within [0, 86400] s"
        );
        assert!(err("call_timeout_s=soon").starts_with("options.call_timeout_s = \"soon\""));
        assert!(err("fall_back_to_fetched_tables=yes").ends_with("must be true, false, 1 or 0"));
        assert_eq!(
            err("tls_server_name=x"),
            "options.tls_server_name = \"x\": needs tls_ca_file as well"
        );
        assert!(err("novalue").ends_with("each setting must be key=value"));
    }
}
