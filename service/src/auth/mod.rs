//! Bearer-token authentication: the tokens file, which calls need a token, and who a presented
//! token names.
//!
//! Tokens file (our own plain format): one `NAME TOKEN` pair per line, separated by spaces or
//! tabs; blank lines and lines starting with `#` are ignored. Names are 1 to 64 characters of
//! `A-Z a-z 0-9 . _ -` and appear in the audit log; tokens are 16 to 512 visible ASCII
//! characters and never appear anywhere. Only blake3 hashes of the tokens are kept in memory,
//! and a presented token is hashed and compared with `blake3::Hash`'s constant-time equality
//! against every entry, so neither the comparison nor the position of a match shows in timing.
//!
//! Admin calls always need a token: a server without a tokens file refuses them all. With
//! [`Scope::All`] every call needs one, except the standard health checks (probes carry no
//! credentials).

mod layer;

pub use layer::AuthLayer;

use std::path::{Path, PathBuf};

/// The gRPC path prefix of the Admin service.
const ADMIN_PREFIX: &str = "/ratewell.v1.Admin/";
/// The gRPC path prefix of the standard health service, open to probes whatever the scope.
const HEALTH_PREFIX: &str = "/grpc.health.v1.Health/";

/// Why a tokens file was refused (never echoes a token).
#[derive(Debug, thiserror::Error)]
pub enum TokensFileError {
    /// The file could not be read.
    #[error("cannot read tokens file {}: {source}", path.display())]
    Read {
        /// The file.
        path: PathBuf,
        /// The I/O error.
        source: std::io::Error,
    },
    /// A line breaks the format.
    #[error("tokens file {}, line {line}: {problem}", path.display())]
    Line {
        /// The file.
        path: PathBuf,
        /// 1-based line number.
        line: usize,
        /// What is wrong (names the rule, never the token).
        problem: String,
    },
    /// The file holds no token.
    #[error("tokens file {} holds no `NAME TOKEN` line", path.display())]
    Empty {
        /// The file.
        path: PathBuf,
    },
}

/// Which calls need a token.
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize, serde::Deserialize, clap::ValueEnum,
)]
#[serde(rename_all = "lowercase")]
pub enum Scope {
    /// Only Admin calls (the default).
    #[default]
    Admin,
    /// Every call except the standard health checks.
    All,
}

impl Scope {
    /// The setting's spelling.
    pub fn as_str(self) -> &'static str {
        match self {
            Self::Admin => "admin",
            Self::All => "all",
        }
    }
}

/// The caller a valid token named, put in the request's extensions for handlers and audit.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Caller(pub String);

/// Why a call was refused before it reached its handler.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum Refusal {
    /// The call needs a token and carried no `authorization` header.
    #[error("{what} require a bearer token: send the header `authorization: Bearer <token>`")]
    Missing {
        /// "admin calls" or "all calls on this server".
        what: &'static str,
    },
    /// The header is not `Bearer <token>` in visible ASCII.
    #[error("the authorization header must be `Bearer <token>` (visible ASCII)")]
    Malformed,
    /// No configured token matches.
    #[error("the bearer token is not one this server accepts")]
    Unknown,
    /// An admin call reached a server that has no tokens at all.
    #[error(
        "admin calls need a bearer token and this server has no tokens file; the operator sets tokens_file to allow them"
    )]
    NoTokens,
}

/// The configured tokens (as hashes) and scope: decides every call.
#[derive(Debug, Clone, Default)]
pub struct Gate {
    entries: Vec<(String, blake3::Hash)>,
    scope: Scope,
}

impl Gate {
    /// A gate with no tokens: Admin refused, everything else open.
    pub fn closed_admin() -> Self {
        Self::default()
    }

    /// A gate over the tokens of `text` (the contents of `path`, named in errors).
    pub fn parse(path: &Path, text: &str, scope: Scope) -> Result<Self, TokensFileError> {
        let bad = |line: usize, problem: String| TokensFileError::Line {
            path: path.to_owned(),
            line,
            problem,
        };
        let mut entries: Vec<(String, blake3::Hash)> = Vec::new();
        for (i, raw) in text.lines().enumerate() {
            let line = raw.trim();
            if line.is_empty() || line.starts_with('#') {
                continue;
            }
            let mut parts = line.split_whitespace();
            let (Some(name), Some(token), None) = (parts.next(), parts.next(), parts.next()) else {
                return Err(bad(i + 1, "must be `NAME TOKEN` (two fields)".into()));
            };
            let name_ok = (1..=64).contains(&name.len())
                && name
                    .bytes()
                    .all(|b| b.is_ascii_alphanumeric() || b"._-".contains(&b));
            if !name_ok {
                return Err(bad(
                    i + 1,
                    "the name must be 1 to 64 characters of A-Z a-z 0-9 . _ -".into(),
                ));
            }
            if !(16..=512).contains(&token.len()) || !token.bytes().all(|b| b.is_ascii_graphic()) {
                return Err(bad(
                    i + 1,
                    format!(
                        "the token of {name} must be 16 to 512 visible ASCII characters (it has {} characters)",
                        token.chars().count()
                    ),
                ));
            }
            let hash = blake3::hash(token.as_bytes());
            if entries.iter().any(|(n, _)| n == name) {
                return Err(bad(i + 1, format!("the name {name} appears twice")));
            }
            if entries.iter().any(|(_, h)| *h == hash) {
                return Err(bad(
                    i + 1,
                    format!("the token of {name} is also another name's token"),
                ));
            }
            entries.push((name.to_owned(), hash));
        }
        if entries.is_empty() {
            return Err(TokensFileError::Empty {
                path: path.to_owned(),
            });
        }
        Ok(Self { entries, scope })
    }

    /// Reads and parses the tokens file at `path`.
    pub fn from_file(path: &Path, scope: Scope) -> Result<Self, TokensFileError> {
        let text = std::fs::read_to_string(path).map_err(|source| TokensFileError::Read {
            path: path.to_owned(),
            source,
        })?;
        Self::parse(path, &text, scope)
    }

    /// How many tokens are configured.
    pub fn token_count(&self) -> usize {
        self.entries.len()
    }

    /// Which calls need a token.
    pub fn scope(&self) -> Scope {
        self.scope
    }

    /// Decides a call to gRPC `path` carrying `authorization` (the raw header, if any): the
    /// caller a valid token names, `None` for an open call that carried no token, or why it is
    /// refused. A token sent to an open call is still checked, so a wrong one is never ignored.
    pub fn check(&self, path: &str, authorization: Option<&[u8]>) -> Result<Option<Caller>, Refusal> {
        let admin = path.starts_with(ADMIN_PREFIX);
        let needs = admin || (self.scope == Scope::All && !path.starts_with(HEALTH_PREFIX));
        let Some(header) = authorization else {
            if !needs {
                return Ok(None);
            }
            if admin && self.entries.is_empty() {
                return Err(Refusal::NoTokens);
            }
            let what = if admin {
                "admin calls"
            } else {
                "all calls on this server"
            };
            return Err(Refusal::Missing { what });
        };
        if admin && self.entries.is_empty() {
            return Err(Refusal::NoTokens);
        }
        let token = bearer_token(header).ok_or(Refusal::Malformed)?;
        let presented = blake3::hash(token);
        let mut found: Option<&str> = None;
        for (name, hash) in &self.entries {
            // Constant-time equality (blake3::Hash), and no early exit.
            if *hash == presented {
                found = Some(name);
            }
        }
        match found {
            Some(name) => Ok(Some(Caller(name.to_owned()))),
            None => Err(Refusal::Unknown),
        }
    }
}

/// The token of an `authorization: Bearer <token>` header (scheme case-insensitive, RFC 6750
/// section 2.1), when the header is visible ASCII.
fn bearer_token(header: &[u8]) -> Option<&[u8]> {
    let text = std::str::from_utf8(header).ok()?.trim();
    let (scheme, token) = text.split_once(' ')?;
    let token = token.trim();
    (scheme.eq_ignore_ascii_case("bearer")
        && !token.is_empty()
        && token.bytes().all(|b| b.is_ascii_graphic()))
    .then_some(token.as_bytes())
}

#[cfg(test)]
mod tests {
    use super::*;

    const FILE: &str = "# operators\nalice  0123456789abcdef-alice\n\n\tbob\tfedcba9876543210-bob\n";

    fn gate(scope: Scope) -> Gate {
        Gate::parse(Path::new("tokens"), FILE, scope).expect("valid file")
    }

    const RATES: &str = "/ratewell.v1.Rates/LookupRates";
    const ADMIN: &str = "/ratewell.v1.Admin/LoadDataset";
    const HEALTH: &str = "/grpc.health.v1.Health/Check";

    #[test]
    fn a_right_token_names_its_caller() {
        // RFC 6750 section 2.1: "Bearer" is matched case-insensitively.
        let g = gate(Scope::Admin);
        assert_eq!(g.token_count(), 2);
        let who = g.check(ADMIN, Some(b"Bearer fedcba9876543210-bob")).unwrap();
        assert_eq!(who, Some(Caller("bob".into())));
        let who = g.check(ADMIN, Some(b"bearer 0123456789abcdef-alice")).unwrap();
        assert_eq!(who, Some(Caller("alice".into())));
    }

    #[test]
    fn admin_needs_a_token_and_other_calls_do_not_by_default() {
        let g = gate(Scope::Admin);
        assert_eq!(g.check(RATES, None), Ok(None));
        assert_eq!(
            g.check(ADMIN, None),
            Err(Refusal::Missing { what: "admin calls" })
        );
        assert_eq!(
            g.check(ADMIN, Some(b"Bearer 0123456789abcdef-alicX")),
            Err(Refusal::Unknown)
        );
        assert_eq!(
            g.check(ADMIN, Some(b"Basic YWxpY2U6c2VjcmV0")),
            Err(Refusal::Malformed)
        );
        // A wrong token on an open call is refused, not ignored.
        assert_eq!(
            g.check(RATES, Some(b"Bearer not-a-known-token!")),
            Err(Refusal::Unknown)
        );
    }

    #[test]
    fn scope_all_covers_everything_but_health() {
        let g = gate(Scope::All);
        assert!(matches!(g.check(RATES, None), Err(Refusal::Missing { .. })));
        assert_eq!(g.check(HEALTH, None), Ok(None));
        assert!(
            g.check(RATES, Some(b"Bearer 0123456789abcdef-alice"))
                .unwrap()
                .is_some()
        );
    }

    #[test]
    fn without_tokens_admin_is_refused_whatever_is_sent() {
        let g = Gate::closed_admin();
        assert_eq!(g.check(ADMIN, None), Err(Refusal::NoTokens));
        assert_eq!(
            g.check(ADMIN, Some(b"Bearer 0123456789abcdef-alice")),
            Err(Refusal::NoTokens)
        );
        assert_eq!(g.check(RATES, None), Ok(None));
    }

    #[test]
    fn bad_files_name_the_line_and_never_the_token() {
        let secret = "short-secret";
        let err = Gate::parse(Path::new("t"), &format!("carol {secret}\n"), Scope::Admin).unwrap_err();
        let text = err.to_string();
        assert!(text.contains("line 1") && text.contains("16 to 512"), "{text}");
        assert!(!text.contains(secret), "{text}");
        let err = Gate::parse(Path::new("t"), "alice 0123456789abcdef x\n", Scope::Admin).unwrap_err();
        assert!(err.to_string().contains("two fields"), "{err}");
        let dup = "a 0123456789abcdef-one\na 0123456789abcdef-two\n";
        assert!(
            Gate::parse(Path::new("t"), dup, Scope::Admin)
                .unwrap_err()
                .to_string()
                .contains("twice")
        );
        let same = "a 0123456789abcdef-one\nb 0123456789abcdef-one\n";
        let err = Gate::parse(Path::new("t"), same, Scope::Admin).unwrap_err();
        assert!(err.to_string().contains("another name's token"), "{err}");
        assert!(matches!(
            Gate::parse(Path::new("t"), "# nothing\n", Scope::Admin),
            Err(TokensFileError::Empty { .. })
        ));
    }
}
