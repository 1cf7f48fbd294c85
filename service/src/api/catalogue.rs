//! Catalogue service: datasets, species, levels, transitions.

use super::convert::{energy_unit, grid_spec_to_wire, selector, species_description_to_wire, stamp};
use super::{AppState, deadline_of};
use ratewell_proto::pb::{self, catalogue_server::Catalogue};
use tonic::{Request, Response, Status};

/// Handler of the Catalogue service.
#[derive(Clone)]
pub struct CatalogueHandler(pub AppState);

#[tonic::async_trait]
impl Catalogue for CatalogueHandler {
    async fn list_datasets(
        &self,
        _request: Request<pb::ListDatasetsRequest>,
    ) -> Result<Response<pb::ListDatasetsResponse>, Status> {
        let default_grid = grid_spec_to_wire(&self.0.engine.config().default_grid);
        let datasets = self
            .0
            .engine
            .datasets()
            .iter()
            .map(|d| pb::DatasetSummary {
                stamp: Some(stamp(&d.stamp)),
                description: d.dataset.description.clone(),
                provenance: d.dataset.provenance.clone(),
                species: d.dataset.species.iter().map(|s| s.name.clone()).collect(),
                default_grid: Some(default_grid),
                loaded_at_unix_s: d.loaded_at_unix_s,
            })
            .collect();
        Ok(Response::new(pb::ListDatasetsResponse { datasets }))
    }

    async fn describe_species(
        &self,
        request: Request<pb::DescribeSpeciesRequest>,
    ) -> Result<Response<pb::DescribeSpeciesResponse>, Status> {
        let deadline = deadline_of(&request);
        let req = request.into_inner();
        self.0
            .run(deadline, move |engine| {
                let selector = selector(req.dataset.as_ref(), "dataset")?;
                let unit = energy_unit(req.energy_unit)?;
                let description = engine.describe_species(&selector, &req.species, unit)?;
                Ok(species_description_to_wire(description))
            })
            .await
            .map(Response::new)
    }
}
