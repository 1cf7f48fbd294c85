//! Rates service: fetch tables for local evaluation, batched lookups, streamed lookups.

use super::convert::{grid_spec, lookup_answer, lookup_query, selector, stamp};
use super::{AppState, deadline_of, status, stopping_status};
use crate::engine::lookup::LookupQuery;
use crate::engine::{EngineError, LoadedDataset, Snapshots};
use ratewell_proto::pb::{self, rates_server::Rates};
use ratewell_proto::wire::{grid_to_wire, table_to_wire};
use std::pin::Pin;
use std::sync::Arc;
use tokio_stream::{Stream, StreamExt};
use tonic::{Request, Response, Status, Streaming};

/// Largest lookup (transitions x temperatures) answered on the async thread that received it:
/// a few microseconds of work, less than the hand-off to a blocking thread would cost.
const INLINE_MAX_VALUES: usize = 4096;

/// Whether a lookup is certainly cheap: its transitions are listed (an empty list means all of
/// a species' transitions, possibly tens of thousands), it is small, and it uses the default
/// grid (another grid may need its tables precomputed first).
fn is_small_lookup(req: &pb::LookupRatesRequest) -> bool {
    !req.transitions.is_empty()
        && req.grid.is_none()
        && req.transitions.len().saturating_mul(req.temperatures.len()) <= INLINE_MAX_VALUES
}

/// Handler of the Rates service.
#[derive(Clone)]
pub struct RatesHandler(pub AppState);

/// The response stream of LookupRatesStream.
pub type LookupStream = Pin<Box<dyn Stream<Item = Result<pb::LookupRatesResponse, Status>> + Send>>;

#[tonic::async_trait]
impl Rates for RatesHandler {
    async fn fetch_tables(
        &self,
        request: Request<pb::FetchTablesRequest>,
    ) -> Result<Response<pb::FetchTablesResponse>, Status> {
        let deadline = deadline_of(&request);
        let req = request.into_inner();
        self.0
            .run_cancellable(deadline, move |engine, cancel| {
                let loaded = engine.select(&selector(req.dataset.as_ref(), "dataset")?)?;
                let tables = engine.species_tables_cancellable(
                    &loaded,
                    &req.species,
                    grid_spec(req.grid.as_ref()),
                    cancel,
                )?;
                Ok(pb::FetchTablesResponse {
                    stamp: Some(stamp(&loaded.stamp)),
                    species: tables.species.clone(),
                    grid: Some(grid_to_wire(&tables.grid)),
                    tables: tables.tables.iter().map(table_to_wire).collect(),
                    cautions: tables.cautions.clone(),
                    table_set_digest: tables.digest.clone(),
                })
            })
            .await
            .map(Response::new)
    }

    async fn lookup_rates(
        &self,
        request: Request<pb::LookupRatesRequest>,
    ) -> Result<Response<pb::LookupRatesResponse>, Status> {
        let deadline = deadline_of(&request);
        let req = request.into_inner();
        if is_small_lookup(&req) {
            return self
                .0
                .run_inline(move |engine| Ok(lookup_answer(engine.lookup(&lookup_query(&req)?)?)))
                .map(Response::new);
        }
        self.0
            .run_cancellable(deadline, move |engine, cancel| {
                Ok(lookup_answer(
                    engine.lookup_cancellable(&lookup_query(&req)?, cancel)?,
                ))
            })
            .await
            .map(Response::new)
    }

    type LookupRatesStreamStream = LookupStream;

    /// Each message is answered in order. An unpinned selector is resolved at the first
    /// message naming it and every later message naming it is answered from that same dataset,
    /// even after a reload ([`Snapshots`]). The work of a message stops when the client goes
    /// away; at the shutdown cut the stream ends with UNAVAILABLE like any call.
    async fn lookup_rates_stream(
        &self,
        request: Request<Streaming<pb::LookupRatesRequest>>,
    ) -> Result<Response<Self::LookupRatesStreamStream>, Status> {
        let deadline = deadline_of(&request);
        let started = std::time::Instant::now();
        let mut incoming = request.into_inner();
        let state = self.0.clone();
        let idle_limit = state.request_timeout();
        let output = async_stream_of(move |tx| async move {
            let mut snapshots = Snapshots::default();
            loop {
                // A stream that sends nothing for the request timeout is ended, so idle streams
                // do not outlive it.
                let next = tokio::select! {
                    next = tokio::time::timeout(idle_limit, incoming.next()) => next,
                    () = state.wait_for_cut() => {
                        let _ = tx.send(Err(stopping_status())).await;
                        break;
                    }
                };
                let next = match next {
                    Ok(Some(next)) => next,
                    Ok(None) => break,
                    Err(_) => {
                        let _ = tx
                            .send(Err(Status::deadline_exceeded(format!(
                                "no request on the stream for {:.3} s (setting request_timeout_s)",
                                idle_limit.as_secs_f64()
                            ))))
                            .await;
                        break;
                    }
                };
                let answer = match next.map(|req| stream_lookup(&state, &mut snapshots, &req)) {
                    Ok(Ok((loaded, query))) => {
                        // The stream's deadline covers the whole stream.
                        let left = deadline.map(|d| d.saturating_sub(started.elapsed()));
                        let work = state.run_cancellable(left, move |engine, cancel| {
                            Ok(lookup_answer(engine.lookup_in(&loaded, &query, cancel)?))
                        });
                        tokio::select! {
                            answer = work => answer,
                            // Nobody reads the answer: dropping the call stops its work.
                            () = tx.closed() => break,
                        }
                    }
                    Ok(Err(status)) | Err(status) => Err(status),
                };
                let failed = answer.is_err();
                if tx.send(answer).await.is_err() || failed {
                    break;
                }
            }
        });
        Ok(Response::new(output))
    }
}

/// A stream message as a lookup query and the dataset it is answered from (kept in
/// `snapshots` from the first message naming it).
fn stream_lookup(
    state: &AppState,
    snapshots: &mut Snapshots,
    req: &pb::LookupRatesRequest,
) -> Result<(Arc<LoadedDataset>, LookupQuery), Status> {
    let refused = |e: EngineError| status::to_status(&e);
    let query = lookup_query(req).map_err(refused)?;
    let loaded = snapshots
        .resolve(&query.selector, |s| state.engine.select(s))
        .map_err(refused)?;
    Ok((loaded, query))
}

/// A response stream fed by a spawned task through a small bounded channel (backpressure: the
/// task waits while the client is slow to read).
fn async_stream_of<F, Fut>(produce: F) -> LookupStream
where
    F: FnOnce(tokio::sync::mpsc::Sender<Result<pb::LookupRatesResponse, Status>>) -> Fut,
    Fut: std::future::Future<Output = ()> + Send + 'static,
{
    let (tx, rx) = tokio::sync::mpsc::channel(4);
    tokio::spawn(produce(tx));
    Box::pin(tokio_stream::wrappers::ReceiverStream::new(rx))
}
