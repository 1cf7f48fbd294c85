//! What every command needs: the client, the output mode, and the dataset to ask about.

use crate::args::Cli;
use crate::error::CliError;
use ratewell_client::{Client, ClientConfig, DatasetRef, TlsSettings};
use std::collections::BTreeSet;

/// The client and the global options.
pub(crate) struct Context {
    /// Client without a dataset set.
    pub(crate) client: Client,
    /// JSON output.
    pub(crate) json: bool,
    dataset: Option<String>,
    version: Option<String>,
    pin_hash: Option<String>,
    pin_tables_digest: Option<String>,
}

impl Context {
    /// A client for the global options (connects lazily). Checks the pin's form at once.
    pub(crate) fn new(cli: &Cli) -> Result<Self, CliError> {
        if let Some(h) = &cli.pin_hash {
            DatasetRef::new("check")?.pinned(h)?;
        }
        if let Some(d) = &cli.pin_tables_digest {
            DatasetRef::new("check")?.pin_tables_digest(d)?;
        }
        let mut config = ClientConfig::new(String::new())
            .with_endpoints(cli.server.clone())
            .with_call_timeout(cli.timeout);
        // A long --timeout is not cut short by the default overall retry deadline.
        config.retry.deadline = config.retry.deadline.max(cli.timeout);
        if let Some(wait) = cli.wait_for_server {
            config = config.with_wait_for_server(wait);
        }
        if let Some(file) = &cli.token_file {
            config = config
                .with_token_file(file)
                .map_err(|e| CliError::argument("--token-file", e))?;
        } else if let Some(token) = std::env::var("RATEWELL_TOKEN").ok().filter(|t| !t.is_empty()) {
            config = config.with_token(token);
        }
        if let Some(ca) = &cli.tls_ca_file {
            let mut tls = TlsSettings::new(ca);
            tls.server_name = cli.tls_server_name.clone();
            config = config.with_tls(tls);
        }
        config
            .validate()
            .map_err(|e| CliError::argument("--server/--timeout/--token-file/--tls-ca-file", e))?;
        Ok(Self {
            client: Client::new(config)?,
            json: cli.json,
            dataset: cli.dataset.clone(),
            version: cli.dataset_version.clone(),
            pin_hash: cli.pin_hash.clone(),
            pin_tables_digest: cli.pin_tables_digest.clone(),
        })
    }

    /// The dataset from --dataset/--version/--pin-hash; without --dataset, the server's only
    /// dataset id.
    pub(crate) async fn dataset(&self) -> Result<DatasetRef, CliError> {
        let id = match &self.dataset {
            Some(id) => id.clone(),
            None => {
                let sets = self.client.list_datasets().await?;
                let ids: BTreeSet<String> = sets
                    .iter()
                    .filter_map(|s| s.stamp.as_ref().map(|st| st.id.clone()))
                    .collect();
                let mut it = ids.iter();
                match (it.next(), it.next()) {
                    (Some(only), None) => only.clone(),
                    (None, _) => {
                        return Err(CliError::argument(
                            "--dataset",
                            "not given, and the server holds no dataset",
                        ));
                    }
                    (Some(_), Some(_)) => {
                        return Err(CliError::argument(
                            "--dataset",
                            format!(
                                "not given; the server holds several ({}): choose one",
                                ids.iter().cloned().collect::<Vec<_>>().join(", ")
                            ),
                        ));
                    }
                }
            }
        };
        let mut d = DatasetRef::new(id).map_err(|e| CliError::argument("--dataset", e))?;
        if let Some(v) = &self.version {
            d = d.with_version(v.clone());
        }
        if let Some(h) = &self.pin_hash {
            d = d.pinned(h)?;
        }
        if let Some(t) = &self.pin_tables_digest {
            d = d.pin_tables_digest(t)?;
        }
        Ok(d)
    }

    /// The client asking about the selected dataset.
    pub(crate) async fn dataset_client(&self) -> Result<Client, CliError> {
        Ok(self.client.with_dataset(self.dataset().await?))
    }
}
