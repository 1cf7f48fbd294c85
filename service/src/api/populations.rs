//! Populations service: statistical-equilibrium solves.

use super::convert::{solve_answer, solve_query};
use super::{AppState, deadline_of};
use ratewell_proto::pb::{self, populations_server::Populations};
use tonic::{Request, Response, Status};

/// Handler of the Populations service.
#[derive(Clone)]
pub struct PopulationsHandler(pub AppState);

#[tonic::async_trait]
impl Populations for PopulationsHandler {
    async fn solve_populations(
        &self,
        request: Request<pb::SolvePopulationsRequest>,
    ) -> Result<Response<pb::SolvePopulationsResponse>, Status> {
        let deadline = deadline_of(&request);
        let req = request.into_inner();
        self.0
            .run_cancellable(deadline, move |engine, cancel| {
                Ok(solve_answer(
                    engine.solve_cancellable(&solve_query(&req)?, cancel)?,
                ))
            })
            .await
            .map(Response::new)
    }
}
