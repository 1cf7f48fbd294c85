//! What every command needs: the client, the output mode, and the dataset to ask about.

use crate::args::Cli;
use crate::error::CliError;
use ratewell_client::{Client, ClientConfig, DatasetRef};
use std::collections::BTreeSet;

/// The client and the global options.
pub(crate) struct Context {
    /// Client without a dataset set.
    pub(crate) client: Client,
    /// JSON output.
    pub(crate) json: bool,
    /// Time budget of each call.
    pub(crate) timeout: std::time::Duration,
    dataset: Option<String>,
    version: Option<String>,
    pin_hash: Option<String>,
}

impl Context {
    /// A client for the global options (connects lazily). Checks the pin's form at once.
    pub(crate) fn new(cli: &Cli) -> Result<Self, CliError> {
        if let Some(h) = &cli.pin_hash {
            DatasetRef::new("check")?.pinned(h)?;
        }
        let mut config = ClientConfig::new(String::new())
            .with_endpoints(cli.server.clone())
            .with_call_timeout(cli.timeout);
        // A long --timeout is not cut short by the default overall retry deadline.
        config.retry.deadline = config.retry.deadline.max(cli.timeout);
        config
            .validate()
            .map_err(|e| CliError::argument("--server/--timeout", e))?;
        Ok(Self {
            client: Client::new(config)?,
            json: cli.json,
            timeout: cli.timeout,
            dataset: cli.dataset.clone(),
            version: cli.dataset_version.clone(),
            pin_hash: cli.pin_hash.clone(),
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
        Ok(d)
    }

    /// The client asking about the selected dataset.
    pub(crate) async fn dataset_client(&self) -> Result<Client, CliError> {
        Ok(self.client.with_dataset(self.dataset().await?))
    }
}
