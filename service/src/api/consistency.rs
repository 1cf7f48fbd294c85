//! Consistency service: comparison of two datasets.

use super::convert::{compare_answer, compare_query};
use super::{AppState, deadline_of};
use ratewell_proto::pb::{self, consistency_server::Consistency};
use tonic::{Request, Response, Status};

/// Handler of the Consistency service.
#[derive(Clone)]
pub struct ConsistencyHandler(pub AppState);

#[tonic::async_trait]
impl Consistency for ConsistencyHandler {
    async fn compare_datasets(
        &self,
        request: Request<pb::CompareDatasetsRequest>,
    ) -> Result<Response<pb::CompareDatasetsResponse>, Status> {
        let deadline = deadline_of(&request);
        let req = request.into_inner();
        self.0
            .run_cancellable(deadline, move |engine, cancel| {
                Ok(compare_answer(
                    engine.compare_cancellable(&compare_query(&req)?, cancel)?,
                ))
            })
            .await
            .map(Response::new)
    }
}
