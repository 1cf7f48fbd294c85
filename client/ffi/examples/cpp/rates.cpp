// ratewell from C++: the same job as the C example through the RAII wrapper ratewell.hpp.
// Usage: rates SERVER_URL [TABLE_FILE_DIR]. The demo dataset is invented.
#include <cinttypes>
#include <cstdio>
#include <cstring>
#include <vector>

#include "ratewell.hpp"

static uint64_t bits(double x) {
    uint64_t b;
    std::memcpy(&b, &x, sizeof b);
    return b;
}

int main(int argc, char **argv) {
    if (argc < 2) {
        std::fprintf(stderr, "usage: %s SERVER_URL [TABLE_FILE_DIR]\n", argv[0]);
        return 2;
    }
    try {
        ratewell::Connection connection(argv[1], "demo", "", "", 30.0);
        ratewell::Tables tables = connection.fetch_tables("Mk III");
        std::printf("stamp id %s\n", tables.stamp(RATEWELL_STAMP_ID).c_str());
        std::printf("stamp version %s\n", tables.stamp(RATEWELL_STAMP_VERSION).c_str());
        std::printf("stamp content_hash %s\n", tables.stamp(RATEWELL_STAMP_CONTENT_HASH).c_str());
        std::printf("stamp table_set_digest %s\n", tables.stamp(RATEWELL_STAMP_TABLE_SET_DIGEST).c_str());
        std::vector<double> temperatures;
        for (int j = 0; j < 40; j++) temperatures.push_back(1500.0 * (1.0 + 0.37 * j * j));
        ratewell::Rates rates;
        double checksum = 0.0;
        for (int round = 0; round < 200; round++) {
            tables.evaluate(temperatures, rates);
            checksum += rates.deexcitation[round % rates.deexcitation.size()];
        }
        std::printf("rounds 200 checksum %.6e\n", checksum);
        for (std::size_t j = 0; j < temperatures.size(); j++)
            std::printf("T %zu %016" PRIx64 "\n", j, bits(temperatures[j]));
        for (std::size_t t = 0; t < tables.size(); t++) {
            auto [upper, lower] = tables.transition(t);
            for (std::size_t j = 0; j < temperatures.size(); j++) {
                std::size_t k = t * temperatures.size() + j;
                std::printf("V %u %u %zu %016" PRIx64 " %016" PRIx64 " %u\n", upper, lower, j,
                            bits(rates.excitation[k]), bits(rates.deexcitation[k]), rates.flags[k]);
            }
        }
        if (argc > 2) {
            std::string path = tables.save(argv[2]);
            ratewell::Tables loaded = ratewell::Tables::load(path);
            ratewell::Rates again;
            loaded.evaluate(temperatures, again);
            bool same = again.excitation == rates.excitation && again.deexcitation == rates.deexcitation &&
                        again.flags == rates.flags;
            std::printf("file %s %s\n", same ? "same-bits" : "DIFFERENT", path.c_str());
        }
        // A refused request shows up as an exception with the status and message.
        try {
            tables.evaluate({-5.0}, rates);
            std::printf("refusal MISSING\n");
        } catch (const ratewell::Error &e) {
            std::printf("refusal %d %s\n", e.status(), e.what());
        }
    } catch (const ratewell::Error &e) {
        std::fprintf(stderr, "ratewell error %d: %s\n", e.status(), e.what());
        return 1;
    }
    return 0;
}
