//! The Python package `ratewell` (native part `ratewell._native`): connections, table sets
//! evaluated into numpy arrays with the server's rule (same bits as the Rust client), table
//! files, and population solves. Every call that evaluates, fetches or solves releases the
//! GIL; network calls run on the calling thread (a current-thread runtime per connection), so
//! the package starts no threads of its own.

use numpy::{IntoPyArray, PyArrayMethods, PyReadonlyArray1};
use pyo3::create_exception;
use pyo3::exceptions::{PyException, PyValueError};
use pyo3::prelude::*;
use pyo3::types::PyDict;
use ratewell_client::{
    Client, ClientConfig, ClientError, DatasetRef, Direction, EvalOptions, LocalTables, OutsidePolicy,
    PopulationQuery, RateUnit, TemperatureUnit, Transition, apply_options, pb,
};
use std::path::Path;
use std::sync::Arc;
use std::time::Duration;

create_exception!(
    _native,
    RatewellError,
    PyException,
    "A ratewell call failed: no server answered, the server refused, a pinned hash differs, or a table file was refused. `code` names the kind."
);

/// The Python exception for a client error: ValueError for bad input, RatewellError (with a
/// `code` attribute) otherwise.
fn to_py(e: ClientError) -> PyErr {
    use ratewell_proto::rule::RuleError;
    let code = match &e {
        ClientError::InvalidArgument { .. }
        | ClientError::Rule(RuleError::TemperatureNotPositive { .. })
        | ClientError::Rule(RuleError::OutsideGrid { .. })
        | ClientError::Rule(RuleError::BufferLength { .. })
        | ClientError::Rule(RuleError::BadGrid { .. }) => return PyValueError::new_err(e.to_string()),
        ClientError::UnknownTransition { .. } => "not_found",
        ClientError::HashMismatch { .. }
        | ClientError::PinRefused { .. }
        | ClientError::TablesDigestMismatch { .. } => "hash_mismatch",
        ClientError::StampMismatch { .. } => "stamp_mismatch",
        ClientError::Timeout { .. } | ClientError::Transport { .. } => "unavailable",
        ClientError::Status { code, .. } => match code {
            tonic::Code::NotFound => "not_found",
            tonic::Code::InvalidArgument | tonic::Code::OutOfRange => {
                return PyValueError::new_err(e.to_string());
            }
            tonic::Code::FailedPrecondition => "hash_mismatch",
            tonic::Code::Unavailable
            | tonic::Code::DeadlineExceeded
            | tonic::Code::ResourceExhausted
            | tonic::Code::Unknown
            | tonic::Code::Cancelled
            | tonic::Code::Aborted => "unavailable",
            _ => "server_error",
        },
        ClientError::Malformed { .. } | ClientError::Rule(RuleError::BadTable { .. }) => "server_error",
        ClientError::TableFile { .. } => "table_file",
        ClientError::Runtime(_) => "internal",
    };
    let err = RatewellError::new_err(e.to_string());
    Python::attach(|py| {
        let _ = err.value(py).setattr("code", code);
    });
    err
}

fn stamp_dict<'py>(
    py: Python<'py>,
    stamp: &pb::DatasetStamp,
    digest: Option<&str>,
) -> PyResult<Bound<'py, PyDict>> {
    let d = PyDict::new(py);
    d.set_item("id", &stamp.id)?;
    d.set_item("version", &stamp.version)?;
    d.set_item("content_hash", &stamp.content_hash)?;
    d.set_item("tables_digest", &stamp.tables_digest)?;
    if let Some(digest) = digest {
        d.set_item("table_set_digest", digest)?;
    }
    Ok(d)
}

/// A connection to one or more ratewell servers for one dataset.
#[pyclass(module = "ratewell._native", frozen)]
struct Connection {
    runtime: tokio::runtime::Runtime,
    client: Client,
}

#[pymethods]
impl Connection {
    /// Opens a connection (lazily). `endpoints`: one address or a list (failover);
    /// `version`, `pinned_hash`, `cache_dir` optional; `time_budget_s`: the most one call may
    /// take over all its retries (None: the library's defaults). `token_file`: a file holding
    /// the bearer token for servers that require one; `tls_ca_file`: connect with TLS trusting
    /// this PEM certificate authority (`tls_server_name` when the certificate names another
    /// host); `wait_for_server_s`: keep trying this long while no server can be reached;
    /// `fall_back_to_fetched_tables`: answer lookups from tables already fetched when no
    /// server answers.
    #[new]
    #[pyo3(signature = (endpoints, dataset, version=None, pinned_hash=None, time_budget_s=None, cache_dir=None, *, token_file=None, tls_ca_file=None, tls_server_name=None, wait_for_server_s=None, fall_back_to_fetched_tables=false, pin_tables_digest=None))]
    #[allow(clippy::too_many_arguments)]
    fn new(
        endpoints: Vec<String>,
        dataset: &str,
        version: Option<&str>,
        pinned_hash: Option<&str>,
        time_budget_s: Option<f64>,
        cache_dir: Option<&str>,
        token_file: Option<&str>,
        tls_ca_file: Option<&str>,
        tls_server_name: Option<&str>,
        wait_for_server_s: Option<f64>,
        fall_back_to_fetched_tables: bool,
        pin_tables_digest: Option<&str>,
    ) -> PyResult<Self> {
        if endpoints.is_empty() {
            return Err(PyValueError::new_err(
                "endpoints = []: one or more server addresses are needed",
            ));
        }
        let mut selected = DatasetRef::new(dataset).map_err(to_py)?;
        if let Some(v) = version {
            selected = selected.with_version(v);
        }
        if let Some(h) = pinned_hash {
            selected = selected.pinned(h).map_err(to_py)?;
        }
        let mut config = ClientConfig::new(endpoints[0].clone())
            .with_endpoints(endpoints)
            .with_dataset(selected);
        if let Some(b) = time_budget_s {
            if !(b.is_finite() && b > 0.0 && b <= 86_400.0) {
                return Err(PyValueError::new_err(format!(
                    "time_budget_s = {b}: must be within (0, 86400] s"
                )));
            }
            let budget = Duration::from_secs_f64(b);
            config.retry.deadline = budget;
            config.call_timeout = config.call_timeout.min(budget);
            config.connect_timeout = config.connect_timeout.min(budget);
        }
        if let Some(dir) = cache_dir {
            config = config.with_cache_dir(dir);
        }
        // The same keys and checks as the C ABI's options (one parser in the client library).
        let mut options = Vec::new();
        for (key, value) in [
            ("token_file", token_file),
            ("tls_ca_file", tls_ca_file),
            ("tls_server_name", tls_server_name),
            ("pin_tables_digest", pin_tables_digest),
        ] {
            if let Some(v) = value {
                if v.contains([';', '\n']) {
                    return Err(PyValueError::new_err(format!(
                        "{key} = {v:?}: must not contain ';' or a new line"
                    )));
                }
                options.push(format!("{key}={v}"));
            }
        }
        if let Some(w) = wait_for_server_s {
            options.push(format!("wait_for_server_s={w}"));
        }
        if fall_back_to_fetched_tables {
            options.push("fall_back_to_fetched_tables=true".into());
        }
        config = apply_options(config, &options.join(";")).map_err(to_py)?;
        let runtime = tokio::runtime::Builder::new_current_thread()
            .enable_all()
            .build()
            .map_err(|e| RatewellError::new_err(format!("cannot set up the event loop: {e}")))?;
        let client = {
            let _inside = runtime.enter();
            Client::new(config).map_err(to_py)?
        };
        Ok(Self { runtime, client })
    }

    /// Every rate table of `species` on the server's grid (once per process; from the cache
    /// folder when one is set). The GIL is released while fetching.
    fn fetch_tables(&self, py: Python<'_>, species: &str) -> PyResult<Tables> {
        let tables = py
            .detach(|| self.runtime.block_on(self.client.fetch_tables(species, None)))
            .map_err(to_py)?;
        Ok(Tables { tables })
    }

    /// Level populations on the server: every temperature (K) with every density (cm^-3) when
    /// `grid` is true, else pairs. Returns a dict of numpy arrays: `fractions` (points x
    /// levels, point i * len(densities) + j on a grid), `radiated_power_w`, `flags`, plus
    /// `temperatures_k`, `densities_cm3` per point and the `stamp`.
    #[pyo3(signature = (species, temperatures_k, densities_cm3, grid=true))]
    fn solve_populations<'py>(
        &self,
        py: Python<'py>,
        species: &str,
        temperatures_k: PyReadonlyArray1<'py, f64>,
        densities_cm3: PyReadonlyArray1<'py, f64>,
        grid: bool,
    ) -> PyResult<Bound<'py, PyDict>> {
        let t = temperatures_k.as_array().to_vec();
        let n = densities_cm3.as_array().to_vec();
        let query = if grid {
            PopulationQuery::grid(species, t, n)
        } else {
            PopulationQuery::points(species, t, n)
        };
        let answer = py
            .detach(|| self.runtime.block_on(self.client.solve_populations(&query)))
            .map_err(to_py)?;
        let levels = answer.level_count as usize;
        let points = answer.points.len();
        let mut fractions = Vec::with_capacity(points * levels);
        for p in &answer.points {
            if p.fractions.len() != levels {
                return Err(RatewellError::new_err(format!(
                    "malformed answer: a point has {} fractions, not {levels}",
                    p.fractions.len()
                )));
            }
            fractions.extend_from_slice(&p.fractions);
        }
        let d = PyDict::new(py);
        d.set_item("fractions", fractions.into_pyarray(py).reshape([points, levels])?)?;
        let column = |f: fn(&pb::PopulationPoint) -> f64| answer.points.iter().map(f).collect::<Vec<f64>>();
        d.set_item("radiated_power_w", column(|p| p.radiated_power).into_pyarray(py))?;
        d.set_item("temperatures_k", column(|p| p.temperature_k).into_pyarray(py))?;
        d.set_item("densities_cm3", column(|p| p.density_per_cm3).into_pyarray(py))?;
        let flags: Vec<u32> = answer.points.iter().map(|p| p.flags).collect();
        d.set_item("flags", flags.into_pyarray(py))?;
        d.set_item("level_count", levels)?;
        d.set_item(
            "stamp",
            stamp_dict(py, &answer.stamp.clone().unwrap_or_default(), None)?,
        )?;
        d.set_item("cautions", answer.cautions.clone())?;
        Ok(d)
    }
}

/// An immutable table set of one species; evaluate it from any number of threads at once.
#[pyclass(module = "ratewell._native", frozen)]
struct Tables {
    tables: Arc<LocalTables>,
}

fn temperature_unit(name: &str) -> PyResult<TemperatureUnit> {
    match name {
        "K" => Ok(TemperatureUnit::Kelvin),
        "eV" => Ok(TemperatureUnit::ElectronVolt),
        other => Err(PyValueError::new_err(format!(
            "temperature_unit = {other:?}: must be \"K\" or \"eV\""
        ))),
    }
}

fn rate_unit(name: &str) -> PyResult<RateUnit> {
    match name {
        "cm3/s" => Ok(RateUnit::CubicCentimetrePerSecond),
        "m3/s" => Ok(RateUnit::CubicMetrePerSecond),
        other => Err(PyValueError::new_err(format!(
            "rate_unit = {other:?}: must be \"cm3/s\" or \"m3/s\""
        ))),
    }
}

fn outside_policy(name: &str) -> PyResult<OutsidePolicy> {
    match name {
        "refuse" => Ok(OutsidePolicy::Refuse),
        "extrapolate" => Ok(OutsidePolicy::Extrapolate),
        other => Err(PyValueError::new_err(format!(
            "outside = {other:?}: must be \"refuse\" or \"extrapolate\""
        ))),
    }
}

fn direction(name: &str) -> PyResult<Direction> {
    match name {
        "both" => Ok(Direction::Both),
        "excitation" => Ok(Direction::Excitation),
        "deexcitation" => Ok(Direction::Deexcitation),
        other => Err(PyValueError::new_err(format!(
            "direction = {other:?}: must be \"both\", \"excitation\" or \"deexcitation\""
        ))),
    }
}

/// (excitation, deexcitation, flags); a direction not asked for is None.
type Evaluated<'py> = (
    Option<Bound<'py, PyAny>>,
    Option<Bound<'py, PyAny>>,
    Bound<'py, PyAny>,
);

#[pymethods]
impl Tables {
    /// Loads a table file with no server (format, checksum and table-set digest checked).
    #[staticmethod]
    fn load(py: Python<'_>, path: &str) -> PyResult<Tables> {
        let tables = py.detach(|| LocalTables::load(Path::new(path))).map_err(to_py)?;
        Ok(Tables {
            tables: Arc::new(tables),
        })
    }

    /// Saves a table file into folder `dir` (named by dataset, species, content hash and
    /// table-set digest; written atomically); returns its path.
    fn save(&self, py: Python<'_>, dir: &str) -> PyResult<String> {
        let path = py.detach(|| self.tables.save(Path::new(dir))).map_err(to_py)?;
        Ok(path.display().to_string())
    }

    /// The species.
    #[getter]
    fn species(&self) -> String {
        self.tables.species().to_string()
    }

    /// The dataset stamp: id, version, content_hash, tables_digest, table_set_digest.
    #[getter]
    fn stamp<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyDict>> {
        stamp_dict(py, self.tables.stamp(), Some(self.tables.digest()))
    }

    /// The server's cautions about these tables (approximate data, extrapolated ranges).
    #[getter]
    fn cautions(&self) -> Vec<String> {
        self.tables.cautions().to_vec()
    }

    /// (upper, lower) levels of every table, in the server's order.
    #[getter]
    fn transitions(&self) -> Vec<(u32, u32)> {
        self.tables
            .transitions()
            .iter()
            .map(|t| (t.upper, t.lower))
            .collect()
    }

    /// Evaluates rate coefficients with the server's rule. `temperatures`: a 1-D float64
    /// array; `transitions`: a list of (upper, lower) or None for every table. Returns
    /// (excitation, deexcitation, flags), each of shape (transitions, temperatures); with
    /// `direction` "excitation" or "deexcitation" the other array is None. The GIL is released
    /// while evaluating.
    #[pyo3(signature = (temperatures, transitions=None, temperature_unit="K", rate_unit="cm3/s", outside="refuse", direction="both"))]
    #[allow(clippy::too_many_arguments)] // one parameter per Python keyword argument
    fn evaluate<'py>(
        &self,
        py: Python<'py>,
        temperatures: PyReadonlyArray1<'py, f64>,
        transitions: Option<Vec<(u32, u32)>>,
        temperature_unit: &str,
        rate_unit: &str,
        outside: &str,
        direction: &str,
    ) -> PyResult<Evaluated<'py>> {
        let options = EvalOptions {
            temperature_unit: self::temperature_unit(temperature_unit)?,
            rate_unit: self::rate_unit(rate_unit)?,
            outside: outside_policy(outside)?,
            direction: self::direction(direction)?,
            ..EvalOptions::default()
        };
        let want_e = options.direction != Direction::Deexcitation;
        let want_d = options.direction != Direction::Excitation;
        let chosen: Vec<Transition> = transitions
            .unwrap_or_default()
            .into_iter()
            .map(|(upper, lower)| Transition { upper, lower })
            .collect();
        // A copy, so no other Python thread can change the input while the GIL is released.
        let temps: Vec<f64> = match temperatures.as_slice() {
            Ok(s) => s.to_vec(),
            Err(_) => temperatures.as_array().to_vec(),
        };
        let rows = if chosen.is_empty() {
            self.tables.tables().len()
        } else {
            chosen.len()
        };
        let n_t = temps.len();
        let n = rows
            .checked_mul(n_t)
            .ok_or_else(|| PyValueError::new_err("temperatures: too many values"))?;
        let tables = &self.tables;
        let (e, d, f) = py
            .detach(|| {
                let size = |wanted: bool| if wanted { n } else { 0 };
                let (mut e, mut d, mut f) = (vec![0.0; size(want_e)], vec![0.0; size(want_d)], vec![0u32; n]);
                tables
                    .evaluate_to_slices(&chosen, &temps, options, &mut e, &mut d, &mut f)
                    .map(|()| (e, d, f))
            })
            .map_err(to_py)?;
        let shape = [rows, n_t];
        let array =
            |values: Vec<f64>| -> PyResult<_> { Ok(values.into_pyarray(py).reshape(shape)?.into_any()) };
        Ok((
            if want_e { Some(array(e)?) } else { None },
            if want_d { Some(array(d)?) } else { None },
            f.into_pyarray(py).reshape(shape)?.into_any(),
        ))
    }

    fn __repr__(&self) -> String {
        let s = self.tables.stamp();
        format!(
            "<ratewell.Tables {} from {}@{} ({} tables, content hash {})>",
            self.tables.species(),
            s.id,
            s.version,
            self.tables.tables().len(),
            s.content_hash.get(..16).unwrap_or(&s.content_hash)
        )
    }
}

/// The native part of the `ratewell` package.
#[pymodule]
fn _native(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_class::<Connection>()?;
    m.add_class::<Tables>()?;
    m.add("RatewellError", m.py().get_type::<RatewellError>())?;
    Ok(())
}
