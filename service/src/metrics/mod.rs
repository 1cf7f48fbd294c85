//! Prometheus metrics: calls by method and status code, latency histograms, calls in flight
//! and shed, table-cache bytes, loaded datasets with their hashes, and reloads. Served as
//! OpenMetrics text on a separate plain-HTTP address (`metrics_listen`, off by default) by
//! [`endpoint`]; calls are observed by the server layer in [`layer`].
//!
//! Label values are bounded whatever clients send: a path that is not one of the served methods
//! (read from the contract's descriptor sets) is counted as `unknown`, even when the call is
//! refused before routing, and status codes are the 17 of the gRPC specification.

pub mod endpoint;
pub mod layer;

pub use layer::MetricsLayer;

use prometheus_client::encoding::EncodeLabelSet;
use prometheus_client::metrics::counter::Counter;
use prometheus_client::metrics::family::Family;
use prometheus_client::metrics::gauge::Gauge;
use prometheus_client::metrics::histogram::{Histogram, exponential_buckets};
use prometheus_client::registry::Registry;
use std::time::Duration;
use tonic::Code;

#[derive(Clone, Debug, Hash, PartialEq, Eq, EncodeLabelSet)]
struct CallLabels {
    method: String,
    code: &'static str,
}

#[derive(Clone, Debug, Hash, PartialEq, Eq, EncodeLabelSet)]
struct MethodLabels {
    method: String,
}

#[derive(Clone, Debug, Hash, PartialEq, Eq, EncodeLabelSet)]
struct DatasetLabels {
    id: String,
    version: String,
    content_hash: String,
    tables_digest: String,
}

#[derive(Clone, Debug, Hash, PartialEq, Eq, EncodeLabelSet)]
struct ResultLabels {
    result: &'static str,
}

type LatencyFamily = Family<MethodLabels, Histogram, fn() -> Histogram>;

/// Latency buckets: 50 us doubling to about 26 s (20 buckets).
fn latency_histogram() -> Histogram {
    Histogram::new(exponential_buckets(50e-6, 2.0, 20))
}

/// "package.Service/Method" of every method the server serves: ours and standard health from
/// their descriptor sets, and the two reflection services (standard names).
fn served_methods() -> std::collections::HashSet<String> {
    use prost::Message;
    let mut methods = std::collections::HashSet::new();
    for bytes in [
        ratewell_proto::FILE_DESCRIPTOR_SET,
        tonic_health::pb::FILE_DESCRIPTOR_SET,
    ] {
        let Ok(set) = prost_types::FileDescriptorSet::decode(bytes) else {
            continue;
        };
        for file in set.file {
            for service in &file.service {
                for method in &service.method {
                    methods.insert(format!("{}.{}/{}", file.package(), service.name(), method.name()));
                }
            }
        }
    }
    for version in ["v1", "v1alpha"] {
        methods.insert(format!(
            "grpc.reflection.{version}.ServerReflection/ServerReflectionInfo"
        ));
    }
    methods
}

/// Every metric the server keeps, and the registry that encodes them.
#[derive(Debug)]
pub struct Metrics {
    methods: std::collections::HashSet<String>,
    registry: Registry,
    calls: Family<CallLabels, Counter>,
    latency: LatencyFamily,
    in_flight: Gauge,
    shed: Counter,
    table_bytes: Gauge,
    grid_cache_bytes: Gauge,
    grid_cache_capacity: Gauge,
    grid_cache_entries: Gauge,
    grid_cache_evictions: Counter,
    datasets: Family<DatasetLabels, Gauge>,
    reloads: Family<ResultLabels, Counter>,
}

impl Default for Metrics {
    fn default() -> Self {
        let mut registry = Registry::with_prefix("ratewell");
        let calls = Family::<CallLabels, Counter>::default();
        registry.register(
            "calls",
            "gRPC calls answered, by method and status code",
            calls.clone(),
        );
        let latency: LatencyFamily = Family::new_with_constructor(latency_histogram);
        registry.register_with_unit(
            "call_duration",
            "Time from a call's arrival to the end of its answer, by method",
            prometheus_client::registry::Unit::Seconds,
            latency.clone(),
        );
        let in_flight = Gauge::default();
        registry.register(
            "engine_calls_in_flight",
            "Engine calls holding a concurrency permit",
            in_flight.clone(),
        );
        let shed = Counter::default();
        registry.register(
            "calls_shed",
            "Calls refused because max_in_flight engine calls were running",
            shed.clone(),
        );
        let table_bytes = Gauge::default();
        registry.register_with_unit(
            "table_cache",
            "Approximate heap bytes of cached rate tables",
            prometheus_client::registry::Unit::Bytes,
            table_bytes.clone(),
        );
        let grid_cache_bytes = Gauge::default();
        registry.register_with_unit(
            "grid_cache",
            "Heap bytes of table sets cached for requests' own grids (bounded by table_cache_bytes)",
            prometheus_client::registry::Unit::Bytes,
            grid_cache_bytes.clone(),
        );
        let grid_cache_capacity = Gauge::default();
        registry.register_with_unit(
            "grid_cache_capacity",
            "The byte budget of the own-grid table cache (table_cache_bytes)",
            prometheus_client::registry::Unit::Bytes,
            grid_cache_capacity.clone(),
        );
        let grid_cache_entries = Gauge::default();
        registry.register(
            "grid_cache_entries",
            "Table sets in the own-grid cache",
            grid_cache_entries.clone(),
        );
        let grid_cache_evictions = Counter::default();
        registry.register(
            "grid_cache_evictions",
            "Table sets evicted from the own-grid cache to stay within its budget",
            grid_cache_evictions.clone(),
        );
        let datasets = Family::<DatasetLabels, Gauge>::default();
        registry.register(
            "dataset_loaded",
            "1 for each dataset being served, labelled with its stamp",
            datasets.clone(),
        );
        let reloads = Family::<ResultLabels, Counter>::default();
        registry.register("dataset_loads", "LoadDataset calls, by result", reloads.clone());
        Self {
            methods: served_methods(),
            registry,
            calls,
            latency,
            in_flight,
            shed,
            table_bytes,
            grid_cache_bytes,
            grid_cache_capacity,
            grid_cache_entries,
            grid_cache_evictions,
            datasets,
            reloads,
        }
    }
}

impl Metrics {
    /// Records one answered call to gRPC `path` with `code`, `elapsed` after it arrived.
    pub fn record_call(&self, path: &str, code: Code, elapsed: Duration) {
        let path = path.trim_start_matches('/');
        let method = if self.methods.contains(path) {
            path.to_owned()
        } else {
            "unknown".to_owned()
        };
        self.calls
            .get_or_create(&CallLabels {
                method: method.clone(),
                code: code_name(code),
            })
            .inc();
        self.latency
            .get_or_create(&MethodLabels { method })
            .observe(elapsed.as_secs_f64());
    }

    /// Counts one call shed for load.
    pub fn record_shed(&self) {
        self.shed.inc();
    }

    /// Counts one LoadDataset outcome.
    pub fn record_load(&self, ok: bool) {
        let result = if ok { "ok" } else { "refused" };
        self.reloads.get_or_create(&ResultLabels { result }).inc();
    }

    /// The OpenMetrics text of every metric, with the gauges read from `state` first.
    pub fn render(&self, state: &crate::api::AppState) -> String {
        self.in_flight.set(state.in_flight() as i64);
        self.table_bytes.set(state.engine.table_bytes() as i64);
        let cache = state.engine.cache_stats();
        self.grid_cache_bytes.set(cache.bytes as i64);
        self.grid_cache_capacity.set(cache.capacity_bytes as i64);
        self.grid_cache_entries.set(cache.entries as i64);
        // The cache counts since start; the counter follows it.
        let seen = self.grid_cache_evictions.get();
        self.grid_cache_evictions
            .inc_by(cache.evictions.saturating_sub(seen));
        self.datasets.clear();
        for loaded in state.engine.datasets() {
            let s = &loaded.stamp;
            self.datasets
                .get_or_create(&DatasetLabels {
                    id: s.id.clone(),
                    version: s.version.clone(),
                    content_hash: s.content_hash.clone(),
                    tables_digest: s.tables_digest.clone(),
                })
                .set(1);
        }
        let mut text = String::new();
        // Writing to a String cannot fail.
        let _ = prometheus_client::encoding::text::encode(&mut text, &self.registry);
        text
    }
}

/// The status code's name as the gRPC specification spells it.
pub fn code_name(code: Code) -> &'static str {
    match code {
        Code::Ok => "OK",
        Code::Cancelled => "CANCELLED",
        Code::Unknown => "UNKNOWN",
        Code::InvalidArgument => "INVALID_ARGUMENT",
        Code::DeadlineExceeded => "DEADLINE_EXCEEDED",
        Code::NotFound => "NOT_FOUND",
        Code::AlreadyExists => "ALREADY_EXISTS",
        Code::PermissionDenied => "PERMISSION_DENIED",
        Code::ResourceExhausted => "RESOURCE_EXHAUSTED",
        Code::FailedPrecondition => "FAILED_PRECONDITION",
        Code::Aborted => "ABORTED",
        Code::OutOfRange => "OUT_OF_RANGE",
        Code::Unimplemented => "UNIMPLEMENTED",
        Code::Internal => "INTERNAL",
        Code::Unavailable => "UNAVAILABLE",
        Code::DataLoss => "DATA_LOSS",
        Code::Unauthenticated => "UNAUTHENTICATED",
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn only_served_methods_become_labels() {
        // gRPC over HTTP/2 spec: the path is "/" Service-Name "/" Method-Name.
        let methods = served_methods();
        for served in [
            "ratewell.v1.Rates/LookupRates",
            "ratewell.v1.Admin/LoadDataset",
            "grpc.health.v1.Health/Check",
            "grpc.reflection.v1.ServerReflection/ServerReflectionInfo",
        ] {
            assert!(methods.contains(served), "{served}");
        }
        // A made-up method of a served service, refused before routing, is not a label.
        assert!(!methods.contains("ratewell.v1.Rates/MadeUp"));
    }
}
