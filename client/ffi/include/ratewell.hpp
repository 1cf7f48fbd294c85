// ratewell from C++: a header-only wrapper over the C ABI (ratewell.h). Handles are RAII
// objects (moved, never copied); every failure throws ratewell::Error carrying the status code
// and the library's message.
#ifndef RATEWELL_HPP
#define RATEWELL_HPP

#include <cstdint>
#include <stdexcept>
#include <string>
#include <utility>
#include <vector>

#include "ratewell.h"

namespace ratewell {

/// A failed call: the RATEWELL_* status and the message naming argument, value and range.
class Error : public std::runtime_error {
  public:
    Error(int32_t status, const std::string &message) : std::runtime_error(message), status_(status) {}
    int32_t status() const noexcept { return status_; }

  private:
    int32_t status_;
};

namespace detail {
inline void check(int32_t status, const char *what) {
    if (status != RATEWELL_OK) throw Error(status, std::string(what) + ": " + ratewell_last_error_message());
}
template <typename Get> std::string text(Get get, const char *what) {
    std::vector<char> buffer(256);
    for (;;) {
        int32_t s = get(buffer.data(), buffer.size());
        if (s == RATEWELL_BUFFER_TOO_SMALL && buffer.size() < (1u << 20)) {
            buffer.resize(buffer.size() * 4);
            continue;
        }
        check(s, what);
        return std::string(buffer.data());
    }
}
}  // namespace detail

/// Rate coefficients of chosen transitions at chosen temperatures, transition-major.
struct Rates {
    std::vector<double> excitation, deexcitation;
    std::vector<uint32_t> flags;
};

/// An immutable table set; evaluate from any number of threads at once.
class Tables {
  public:
    explicit Tables(RatewellTables *raw) : raw_(raw) {}
    Tables(Tables &&other) noexcept : raw_(std::exchange(other.raw_, nullptr)) {}
    Tables &operator=(Tables &&other) noexcept {
        std::swap(raw_, other.raw_);
        return *this;
    }
    Tables(const Tables &) = delete;
    Tables &operator=(const Tables &) = delete;
    ~Tables() { ratewell_tables_free(raw_); }

    /// Loads a table file with no server (checksum and digest verified).
    static Tables load(const std::string &path) {
        RatewellTables *raw = nullptr;
        detail::check(ratewell_tables_load(path.c_str(), &raw), "ratewell_tables_load");
        return Tables(raw);
    }

    std::size_t size() const { return ratewell_tables_count(raw_); }

    /// (upper, lower) levels of table `index`.
    std::pair<uint32_t, uint32_t> transition(std::size_t index) const {
        uint32_t upper = 0, lower = 0;
        detail::check(ratewell_tables_transition(raw_, index, &upper, &lower), "ratewell_tables_transition");
        return {upper, lower};
    }

    /// One stamp field (RATEWELL_STAMP_*).
    std::string stamp(int32_t field) const {
        return detail::text([&](char *b, std::size_t n) { return ratewell_tables_stamp(raw_, field, b, n); },
                            "ratewell_tables_stamp");
    }

    /// Evaluates every table (empty `transitions`) or the listed (upper, lower) pairs, into `out`.
    void evaluate(const std::vector<double> &temperatures, Rates &out,
                  const std::vector<std::pair<uint32_t, uint32_t>> &transitions = {},
                  int32_t temperature_unit = RATEWELL_KELVIN, int32_t rate_unit = RATEWELL_CM3_PER_S,
                  int32_t outside = RATEWELL_REFUSE) const {
        std::vector<uint32_t> uppers, lowers;
        for (const auto &t : transitions) {
            uppers.push_back(t.first);
            lowers.push_back(t.second);
        }
        std::size_t rows = transitions.empty() ? size() : transitions.size();
        std::size_t n = rows * temperatures.size();
        out.excitation.resize(n);
        out.deexcitation.resize(n);
        out.flags.resize(n);
        detail::check(ratewell_tables_evaluate(raw_, uppers.data(), lowers.data(), transitions.size(),
                                               temperatures.data(), temperatures.size(), temperature_unit,
                                               rate_unit, outside, out.excitation.data(), out.deexcitation.data(),
                                               out.flags.data(), n),
                      "ratewell_tables_evaluate");
    }

    /// Saves a table file into folder `dir`; returns its path.
    std::string save(const std::string &dir) const {
        return detail::text(
            [&](char *b, std::size_t n) { return ratewell_tables_save(raw_, dir.c_str(), b, n); },
            "ratewell_tables_save");
    }

    const RatewellTables *raw() const noexcept { return raw_; }

  private:
    RatewellTables *raw_;
};

/// A connection to one or more servers for one dataset.
class Connection {
  public:
    /// `endpoints` comma-separated; empty `version`, `pinned_hash`, `cache_dir` mean none;
    /// `time_budget_s` 0 means the library's defaults.
    /// `options`: "" or `key=value` pairs separated by ';' (token_file, tls_ca_file,
    /// tls_server_name, wait_for_server_s, call_timeout_s, fall_back_to_fetched_tables; see
    /// ratewell_open_with_options in ratewell.h).
    Connection(const std::string &endpoints, const std::string &dataset_id, const std::string &version = "",
               const std::string &pinned_hash = "", double time_budget_s = 0.0, const std::string &cache_dir = "",
               const std::string &options = "") {
        detail::check(ratewell_open_with_options(endpoints.c_str(), dataset_id.c_str(), version.c_str(),
                                                 pinned_hash.c_str(), time_budget_s, cache_dir.c_str(),
                                                 options.c_str(), &raw_),
                      "ratewell_open_with_options");
    }
    Connection(Connection &&other) noexcept : raw_(std::exchange(other.raw_, nullptr)) {}
    Connection &operator=(Connection &&other) noexcept {
        std::swap(raw_, other.raw_);
        return *this;
    }
    Connection(const Connection &) = delete;
    Connection &operator=(const Connection &) = delete;
    ~Connection() { ratewell_close(raw_); }

    /// Every table of `species` (fetched once per process).
    Tables fetch_tables(const std::string &species) const {
        RatewellTables *raw = nullptr;
        detail::check(ratewell_fetch_tables(raw_, species.c_str(), &raw), "ratewell_fetch_tables");
        return Tables(raw);
    }

  private:
    RatewellConnection *raw_ = nullptr;
};

}  // namespace ratewell

#endif
