/* ratewell C ABI. Generated from client/ffi/src by cbindgen: do not edit by hand. */

#ifndef RATEWELL_H
#define RATEWELL_H

#include <stddef.h>
#include <stdint.h>

/*
 Success.
 */
#define RATEWELL_OK 0

/*
 A bad argument: null pointer, wrong length, NaN, negative or zero temperature, bad unit.
 */
#define RATEWELL_INVALID_ARGUMENT 1

/*
 A temperature outside the table grid while extrapolation was not allowed.
 */
#define RATEWELL_OUT_OF_RANGE 2

/*
 An unknown species, transition or dataset.
 */
#define RATEWELL_NOT_FOUND 3

/*
 The answer came from a dataset whose content hash differs from the pinned one (refused).
 */
#define RATEWELL_HASH_MISMATCH 4

/*
 The answer names another dataset or version than the one asked for (refused).
 */
#define RATEWELL_STAMP_MISMATCH 5

/*
 No server answered in time (down, unreachable, overloaded): worth retrying later.
 */
#define RATEWELL_UNAVAILABLE 6

/*
 The server answered with another error, or an answer broke the contract.
 */
#define RATEWELL_SERVER_ERROR 7

/*
 A table file could not be written or was refused (not a table file, newer format,
 truncated, corrupted, digest mismatch).
 */
#define RATEWELL_TABLE_FILE 8

/*
 An output string buffer is too small (the message says the size needed).
 */
#define RATEWELL_BUFFER_TOO_SMALL 9

/*
 A bug in ratewell (a caught panic); the message says where.
 */
#define RATEWELL_INTERNAL 10

/*
 Stamp field: dataset id.
 */
#define RATEWELL_STAMP_ID 0

/*
 Stamp field: dataset version.
 */
#define RATEWELL_STAMP_VERSION 1

/*
 Stamp field: hex content hash of the dataset.
 */
#define RATEWELL_STAMP_CONTENT_HASH 2

/*
 Stamp field: hex digest of all the dataset's default-grid tables on the server.
 */
#define RATEWELL_STAMP_TABLES_DIGEST 3

/*
 Stamp field: hex digest of this table set (tables only; "" for population answers).
 */
#define RATEWELL_STAMP_TABLE_SET_DIGEST 4

/*
 Temperature unit: kelvin.
 */
#define RATEWELL_KELVIN 1

/*
 Temperature unit: electronvolt.
 */
#define RATEWELL_ELECTRON_VOLT 2

/*
 Rate unit: cm^3 s^-1.
 */
#define RATEWELL_CM3_PER_S 1

/*
 Rate unit: m^3 s^-1.
 */
#define RATEWELL_M3_PER_S 2

/*
 Outside the grid: refuse (RATEWELL_OUT_OF_RANGE).
 */
#define RATEWELL_REFUSE 0

/*
 Outside the grid: extrapolate and flag (OUTSIDE_GRID).
 */
#define RATEWELL_EXTRAPOLATE 1

/*
 Flag bit: the rate comes from an approximation formula.
 */
#define RATEWELL_FLAG_APPROXIMATE 1

/*
 Flag bit: outside the source range of the data (the value leans on their documented continuation).
 */
#define RATEWELL_FLAG_BEYOND_SOURCE 2

/*
 Flag bit: outside the table grid (extrapolated, only when asked for).
 */
#define RATEWELL_FLAG_OUTSIDE_GRID 4

/*
 A connection to one or more ratewell servers for one dataset (opaque).
 */
typedef struct RatewellConnection RatewellConnection;

/*
 The answer of one population solve (opaque): level fractions, radiated power and flags per
 point, with the dataset stamp.
 */
typedef struct RatewellPopulations RatewellPopulations;

/*
 An immutable table set of one species (opaque). Safe to evaluate from many threads at once.
 */
typedef struct RatewellTables RatewellTables;

#ifdef __cplusplus
extern "C" {
#endif // __cplusplus

/*
 Opens a connection (lazily: nothing is sent until the first call).

 - `endpoints`: one or more server addresses, comma-separated, tried in turn (failover).
 - `dataset_id`: the dataset every call is about (required).
 - `version`: a dataset version, or NULL/"" for the newest loaded.
 - `pinned_hash`: a content hash that every answer must carry, or NULL/"" for none.
 - `time_budget_s`: the most one call may take over all its retries, seconds; 0 for the
   defaults (10 s per attempt, retries within 30 s).
 - `cache_dir`: a folder of table files shared by the processes of a node, or NULL/"".

 On success `*out` holds a handle to free with `ratewell_close`. Equivalent to
 `ratewell_open_with_options` with no options.

 # Safety
 String arguments are NULL or NUL-terminated; `out` points to writable memory.
 */
int32_t ratewell_open(const char *endpoints,
                      const char *dataset_id,
                      const char *version,
                      const char *pinned_hash,
                      double time_budget_s,
                      const char *cache_dir,
                      struct RatewellConnection **out);

/*
 `ratewell_open` with further settings in `options`: NULL/"" or `key=value` pairs separated
 by `;` or new lines. Keys: `token_file` (a file holding the bearer token for servers that
 require one), `tls_ca_file` (connect with TLS trusting this PEM certificate authority;
 addresses become https://), `tls_server_name` (the name on the server certificate when it
 differs from the host), `wait_for_server_s` (keep trying this long while no server can be
 reached: jobs started before their server), `call_timeout_s` (per attempt; a hung server
 is left for the next endpoint after this), `fall_back_to_fetched_tables` (`1`: answer from
 tables already fetched when no server answers). A bad pair is refused naming the key.

 # Safety
 String arguments are NULL or NUL-terminated; `out` points to writable memory.
 */
int32_t ratewell_open_with_options(const char *endpoints,
                                   const char *dataset_id,
                                   const char *version,
                                   const char *pinned_hash,
                                   double time_budget_s,
                                   const char *cache_dir,
                                   const char *options,
                                   struct RatewellConnection **out);

/*
 Closes a connection (NULL: nothing to do). Table sets fetched through it stay valid.

 # Safety
 `connection` came from `ratewell_open` and is not used afterwards.
 */
void ratewell_close(struct RatewellConnection *connection);

/*
 Fetches every rate table of `species` on the server's grid (once per process: later calls
 for the same species come from the in-process cache, or from the cache folder). On success
 `*out` holds an immutable table set to free with `ratewell_tables_free`.

 # Safety
 `connection` is a live handle; `species` is NUL-terminated; `out` is writable.
 */
int32_t ratewell_fetch_tables(const struct RatewellConnection *connection,
                              const char *species,
                              struct RatewellTables **out);

/*
 Solves statistical equilibrium for `species` on the server: with `grid` = 1 every
 temperature (K) with every density (cm^-3), point `i * density_count + j`; with `grid` = 0
 pairs of equal-length arrays. On success `*out` holds an answer to free with
 `ratewell_populations_free`.

 # Safety
 `connection` is live; arrays have the lengths given; `species` is NUL-terminated; `out`
 is writable.
 */
int32_t ratewell_solve_populations(const struct RatewellConnection *connection,
                                   const char *species,
                                   const double *temperatures_k,
                                   size_t temperature_count,
                                   const double *densities_cm3,
                                   size_t density_count,
                                   int32_t grid,
                                   struct RatewellPopulations **out);

/*
 Frees a population answer (NULL: nothing to do).

 # Safety
 `populations` came from ratewell and is not used afterwards.
 */
void ratewell_populations_free(struct RatewellPopulations *populations);

/*
 Number of (temperature, density) points; 0 for NULL.

 # Safety
 `populations` is NULL or live.
 */
size_t ratewell_populations_point_count(const struct RatewellPopulations *populations);

/*
 Number of levels of the species; 0 for NULL.

 # Safety
 `populations` is NULL or live.
 */
size_t ratewell_populations_level_count(const struct RatewellPopulations *populations);

/*
 Copies the level fractions, point-major (`out[p * level_count + j]`, level j + 1), into
 `out` of `length` = points x levels values.

 # Safety
 `populations` is live; `out` has `length` writable values.
 */
int32_t ratewell_populations_fractions(const struct RatewellPopulations *populations,
                                       double *out,
                                       size_t length);

/*
 Copies the radiated power per ion of each point (W) into `out` of `length` = points.

 # Safety
 `populations` is live; `out` has `length` writable values.
 */
int32_t ratewell_populations_radiated_power(const struct RatewellPopulations *populations,
                                            double *out,
                                            size_t length);

/*
 Copies each point's flags (OR of `RATEWELL_FLAG_*` of every rate used) into `out` of
 `length` = points.

 # Safety
 `populations` is live; `out` has `length` writable values.
 */
int32_t ratewell_populations_flags(const struct RatewellPopulations *populations,
                                   uint32_t *out,
                                   size_t length);

/*
 Copies one stamp field (`RATEWELL_STAMP_*`) of the answer into `buffer` (`length` bytes).

 # Safety
 `populations` is live; `buffer` has `length` writable bytes.
 */
int32_t ratewell_populations_stamp(const struct RatewellPopulations *populations,
                                   int32_t field,
                                   char *buffer,
                                   size_t length);

/*
 The message of the last failed call on this thread ("" after a success). The pointer stays
 valid until the next ratewell call on this thread; copy it if you keep it.
 */
const char *ratewell_last_error_message(void);

/*
 Copies the last error message of this thread into `buffer` (`length` bytes, NUL included;
 cut to fit). Returns the message's full length in bytes without the NUL, so a caller can
 tell it was cut. `buffer` may be NULL with `length` 0 to ask for the length.

 # Safety
 `buffer` must point to `length` writable bytes, or be NULL.
 */
size_t ratewell_last_error(char *buffer, size_t length);

/*
 Frees a table set (NULL: nothing to do).

 # Safety
 `tables` came from ratewell and is not used afterwards.
 */
void ratewell_tables_free(struct RatewellTables *tables);

/*
 Number of tables (transitions) in the set; 0 for NULL.

 # Safety
 `tables` is NULL or a live handle.
 */
size_t ratewell_tables_count(const struct RatewellTables *tables);

/*
 The levels (1-based) of table `index` (0-based, in the server's order).

 # Safety
 `tables` is a live handle; `upper` and `lower` are writable.
 */
int32_t ratewell_tables_transition(const struct RatewellTables *tables,
                                   size_t index,
                                   uint32_t *upper,
                                   uint32_t *lower);

/*
 Copies one stamp field (`RATEWELL_STAMP_*`) of the set, NUL-terminated, into `buffer` of
 `length` bytes (65 hold a hash; RATEWELL_BUFFER_TOO_SMALL names the size needed).

 # Safety
 `tables` is a live handle; `buffer` points to `length` writable bytes.
 */
int32_t ratewell_tables_stamp(const struct RatewellTables *tables,
                              int32_t field,
                              char *buffer,
                              size_t length);

/*
 Evaluates rate coefficients with the server's rule (same bits as a server lookup).

 - `uppers`, `lowers`: `transition_count` transitions (1-based levels); count 0 means every
   table in the set's order (see `ratewell_tables_transition`).
 - `temperatures`: `temperature_count` values in `temperature_unit` (`RATEWELL_KELVIN` or
   `RATEWELL_ELECTRON_VOLT`), finite and > 0.
 - `rate_unit`: `RATEWELL_CM3_PER_S` or `RATEWELL_M3_PER_S`; `outside`: `RATEWELL_REFUSE`
   (a temperature off the grid is RATEWELL_OUT_OF_RANGE) or `RATEWELL_EXTRAPOLATE` (flagged).
 - `excitation`, `deexcitation`: outputs of `output_length` values each, transition-major
   (`value[t * temperature_count + j]`); either may be NULL when not wanted, not both.
 - `flags`: `output_length` flag words (`RATEWELL_FLAG_*`), required.

 `output_length` must equal transitions x temperatures. Nothing is allocated per value;
 the call runs on the calling thread.

 # Safety
 Pointers point to arrays of the lengths given (or are NULL where allowed).
 */
int32_t ratewell_tables_evaluate(const struct RatewellTables *tables,
                                 const uint32_t *uppers,
                                 const uint32_t *lowers,
                                 size_t transition_count,
                                 const double *temperatures,
                                 size_t temperature_count,
                                 int32_t temperature_unit,
                                 int32_t rate_unit,
                                 int32_t outside,
                                 double *excitation,
                                 double *deexcitation,
                                 uint32_t *flags,
                                 size_t output_length);

/*
 Saves the set as a table file in folder `dir` (created if missing), named by dataset,
 species, content hash and table-set digest, written atomically; copies the file's path into
 `path_out` (`path_length` bytes; NULL with 0 to skip).

 # Safety
 `tables` is a live handle; `dir` is NUL-terminated; `path_out` has `path_length` bytes.
 */
int32_t ratewell_tables_save(const struct RatewellTables *tables,
                             const char *dir,
                             char *path_out,
                             size_t path_length);

/*
 Loads a table file with no server (format, checksum and table-set digest checked); the set
 evaluates to the same bits as the server's. On success `*out` holds a handle to free with
 `ratewell_tables_free`.

 # Safety
 `path` is NUL-terminated; `out` is writable.
 */
int32_t ratewell_tables_load(const char *path, struct RatewellTables **out);

#ifdef __cplusplus
}  // extern "C"
#endif  // __cplusplus

#endif  /* RATEWELL_H */
