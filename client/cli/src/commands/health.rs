//! `health`: serving status of every server address.

use crate::context::Context;
use crate::error::CliError;
use crate::output::{Table, json_text};
use ratewell_client::{EndpointHealth, ServingStatus};
use serde_json::json;

/// `health`; fails (exit 1) unless every endpoint is serving.
pub(crate) async fn run(ctx: &Context) -> Result<String, CliError> {
    let all = ctx.client.health_all().await;
    let text = if ctx.json { as_json(&all) } else { as_text(&all) };
    let down = all
        .iter()
        .filter(|h| !matches!(h.status, Ok(ServingStatus::Serving)))
        .count();
    if down > 0 {
        // The report goes to standard error with the failure.
        return Err(CliError::Failed(format!(
            "{down} of {} endpoint(s) not serving\n{}",
            all.len(),
            text.trim_end()
        )));
    }
    Ok(text)
}

fn status_text(h: &EndpointHealth) -> String {
    match &h.status {
        Ok(s) => s.name().to_string(),
        Err(e) => format!("unreachable ({e})"),
    }
}

pub(crate) fn as_text(all: &[EndpointHealth]) -> String {
    let mut t = Table::new(&["ENDPOINT", "STATUS"]);
    for h in all {
        t.row(vec![h.endpoint.clone(), status_text(h)]);
    }
    t.render()
}

pub(crate) fn as_json(all: &[EndpointHealth]) -> String {
    let list: Vec<_> = all
        .iter()
        .map(|h| {
            json!({
                "endpoint": h.endpoint,
                "status": h.status.as_ref().map(|s| s.name()).unwrap_or("unreachable"),
                "error": h.status.as_ref().err().map(|e| e.to_string()),
            })
        })
        .collect();
    json_text(&json!({ "endpoints": list }))
}

#[cfg(test)]
mod tests {
    use super::*;
    use ratewell_client::ClientError;

    #[test]
    fn each_endpoint_gets_a_status_line() {
        let all = vec![
            EndpointHealth {
                endpoint: "http://a:1".into(),
                status: Ok(ServingStatus::Serving),
            },
            EndpointHealth {
                endpoint: "http://b:2".into(),
                status: Err(ClientError::Timeout {
                    operation: "Health.Check",
                    after: std::time::Duration::from_secs(1),
                }),
            },
        ];
        let text = as_text(&all);
        assert!(text.contains("http://a:1  serving"), "{text}");
        assert!(
            text.contains("http://b:2  unreachable (Health.Check: no answer within 1s)"),
            "{text}"
        );
        let v: serde_json::Value = serde_json::from_str(&as_json(&all)).unwrap();
        assert_eq!(v["endpoints"][1]["status"], "unreachable");
    }
}
