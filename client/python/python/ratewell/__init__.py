"""ratewell from Python: rate coefficients evaluated in your process with the server's own rule
(the same bits as the Rust client and as a server lookup), table files for nodes with no route
to the service, and population solves, all returned as numpy arrays.

    import numpy as np, ratewell
    conn = ratewell.Connection("http://127.0.0.1:50051", dataset="demo")
    tables = conn.fetch_tables("Mk III")          # once per process
    exc, deexc, flags = tables.evaluate(np.geomspace(5e3, 5e4, 1000))
    print(tables.stamp["content_hash"])

Evaluation, fetches and solves release the GIL; the package starts no threads of its own.
Bad input raises ValueError naming the argument, value and allowed range; other failures raise
RatewellError, whose `code` is one of "unavailable", "not_found", "hash_mismatch",
"stamp_mismatch", "server_error", "table_file", "internal".
"""

import numpy as _np

from ._native import Connection as _Connection
from ._native import RatewellError
from ._native import Tables as _Tables

__all__ = ["Connection", "Tables", "RatewellError", "load_tables", "FLAG_APPROXIMATE",
           "FLAG_BEYOND_SOURCE", "FLAG_OUTSIDE_GRID"]

#: Flag bit: the rate comes from an approximation formula (good to a factor of a few at best).
FLAG_APPROXIMATE = 1
#: Flag bit: outside the source range of the data (the value leans on their documented continuation).
FLAG_BEYOND_SOURCE = 2
#: Flag bit: outside the table grid (extrapolated; only when asked for).
FLAG_OUTSIDE_GRID = 4


def _temperatures(values, name="temperatures"):
    array = _np.ascontiguousarray(values, dtype=_np.float64)
    if array.ndim != 1:
        raise ValueError(f"{name}: shape {array.shape}: must be a 1-D array")
    return array


class Tables:
    """An immutable table set of one species; safe to evaluate from many threads at once."""

    def __init__(self, native):
        self._native = native

    @property
    def species(self):
        """The species name."""
        return self._native.species

    @property
    def stamp(self):
        """Dataset id, version, content_hash, tables_digest and this set's table_set_digest."""
        return self._native.stamp

    @property
    def transitions(self):
        """(upper, lower) levels of every table, in the server's order."""
        return self._native.transitions

    @property
    def cautions(self):
        """The server's cautions about these tables."""
        return self._native.cautions

    def evaluate(self, temperatures, transitions=None, temperature_unit="K", rate_unit="cm3/s",
                 outside="refuse", direction="both"):
        """Rate coefficients at `temperatures` ("K" or "eV") for `transitions` (a list of
        (upper, lower); None: every table), in "cm3/s" or "m3/s". `outside`: "refuse" (a
        temperature off the grid raises ValueError) or "extrapolate" (flagged). `direction`:
        "both", "excitation" or "deexcitation". Returns (excitation, deexcitation, flags),
        arrays of shape (transitions, temperatures); a direction not asked for is None."""
        return self._native.evaluate(_temperatures(temperatures), transitions, temperature_unit,
                                     rate_unit, outside, direction)

    def save(self, directory):
        """Writes a table file into `directory` (atomically); returns its path."""
        return self._native.save(str(directory))

    def __repr__(self):
        return repr(self._native)


def load_tables(path):
    """Reads a table file with no server (format, checksum and digest checked)."""
    return Tables(_Tables.load(str(path)))


class Connection:
    """A connection to one or more ratewell servers for one dataset (connects lazily).

    token_file: a file holding the bearer token for servers that require one.
    tls_ca_file: connect with TLS trusting this PEM certificate authority (tls_server_name when
    the certificate names another host). wait_for_server_s: keep trying this long while no
    server can be reached (jobs started before their server). fall_back_to_fetched_tables:
    answer lookups from tables already fetched when no server answers. pin_tables_digest:
    refuse answers whose tables digest differs (tables built differently from the same data)."""

    def __init__(self, endpoints, dataset, version=None, pinned_hash=None, time_budget_s=None,
                 cache_dir=None, *, token_file=None, tls_ca_file=None, tls_server_name=None,
                 wait_for_server_s=None, fall_back_to_fetched_tables=False, pin_tables_digest=None):
        if isinstance(endpoints, str):
            endpoints = [endpoints]
        text = lambda p: None if p is None else str(p)
        self._native = _Connection(list(endpoints), dataset, version, pinned_hash, time_budget_s,
                                   text(cache_dir), token_file=text(token_file),
                                   tls_ca_file=text(tls_ca_file), tls_server_name=tls_server_name,
                                   wait_for_server_s=wait_for_server_s,
                                   fall_back_to_fetched_tables=bool(fall_back_to_fetched_tables),
                                   pin_tables_digest=pin_tables_digest)

    def fetch_tables(self, species):
        """Every rate table of `species` (once per process, or from the cache folder)."""
        return Tables(self._native.fetch_tables(species))

    def solve_populations(self, species, temperatures_k, densities_cm3, grid=True):
        """Level populations on the server. With grid=True every temperature with every
        density; returns a dict whose "fractions" has shape (len(T), len(n), levels) on a grid,
        (points, levels) for pairs, with "radiated_power_w" and "flags" shaped alike."""
        t = _temperatures(temperatures_k, "temperatures_k")
        n = _temperatures(densities_cm3, "densities_cm3")
        answer = self._native.solve_populations(species, t, n, grid)
        if grid:
            levels = answer["level_count"]
            answer["fractions"] = answer["fractions"].reshape(len(t), len(n), levels)
            for key in ("radiated_power_w", "flags", "temperatures_k", "densities_cm3"):
                answer[key] = answer[key].reshape(len(t), len(n))
        return answer
