/* ratewell from C: fetch the rate tables of one species once, evaluate them in a loop, print
 * the dataset stamp and every value's bits (hex), then save the tables to a table file, load
 * it back with no server and check that it gives the same bits.
 *
 * Usage: rates SERVER_URL [TABLE_FILE_DIR]
 * The demo dataset ("demo", species "Mk III") is invented, for trying the tool out. */
#include <inttypes.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "ratewell.h"

#define N_TEMPERATURES 40
#define ROUNDS 200

static int fail(const char *what, int32_t status) {
    fprintf(stderr, "%s failed with status %d: %s\n", what, (int)status, ratewell_last_error_message());
    return 1;
}

static uint64_t bits(double x) {
    uint64_t b;
    memcpy(&b, &x, sizeof b);
    return b;
}

int main(int argc, char **argv) {
    if (argc < 2) {
        fprintf(stderr, "usage: %s SERVER_URL [TABLE_FILE_DIR]\n", argv[0]);
        return 2;
    }
    RatewellConnection *connection = NULL;
    int32_t s = ratewell_open(argv[1], "demo", NULL, NULL, 30.0, NULL, &connection);
    if (s != RATEWELL_OK) return fail("ratewell_open", s);
    RatewellTables *tables = NULL;
    s = ratewell_fetch_tables(connection, "Mk III", &tables);
    if (s != RATEWELL_OK) return fail("ratewell_fetch_tables", s);

    const char *names[] = {"id", "version", "content_hash", "table_set_digest"};
    const int32_t fields[] = {RATEWELL_STAMP_ID, RATEWELL_STAMP_VERSION, RATEWELL_STAMP_CONTENT_HASH,
                              RATEWELL_STAMP_TABLE_SET_DIGEST};
    char text[128];
    for (int i = 0; i < 4; i++) {
        s = ratewell_tables_stamp(tables, fields[i], text, sizeof text);
        if (s != RATEWELL_OK) return fail("ratewell_tables_stamp", s);
        printf("stamp %s %s\n", names[i], text);
    }

    size_t n_tables = ratewell_tables_count(tables);
    double temperatures[N_TEMPERATURES];
    for (int j = 0; j < N_TEMPERATURES; j++) temperatures[j] = 1500.0 * (1.0 + 0.37 * j * j);
    size_t n = n_tables * N_TEMPERATURES;
    double *exc = malloc(n * sizeof *exc), *deexc = malloc(n * sizeof *deexc);
    uint32_t *flags = malloc(n * sizeof *flags);
    double checksum = 0.0;
    for (int round = 0; round < ROUNDS; round++) {
        s = ratewell_tables_evaluate(tables, NULL, NULL, 0, temperatures, N_TEMPERATURES, RATEWELL_KELVIN,
                                     RATEWELL_CM3_PER_S, RATEWELL_REFUSE, exc, deexc, flags, n);
        if (s != RATEWELL_OK) return fail("ratewell_tables_evaluate", s);
        checksum += deexc[round % n];
    }
    printf("rounds %d checksum %.6e\n", ROUNDS, checksum);
    for (int j = 0; j < N_TEMPERATURES; j++) printf("T %d %016" PRIx64 "\n", j, bits(temperatures[j]));
    for (size_t t = 0; t < n_tables; t++) {
        uint32_t upper, lower;
        s = ratewell_tables_transition(tables, t, &upper, &lower);
        if (s != RATEWELL_OK) return fail("ratewell_tables_transition", s);
        for (int j = 0; j < N_TEMPERATURES; j++) {
            size_t k = t * N_TEMPERATURES + j;
            printf("V %u %u %d %016" PRIx64 " %016" PRIx64 " %u\n", upper, lower, j, bits(exc[k]), bits(deexc[k]),
                   flags[k]);
        }
    }

    if (argc > 2) {
        char path[4096];
        s = ratewell_tables_save(tables, argv[2], path, sizeof path);
        if (s != RATEWELL_OK) return fail("ratewell_tables_save", s);
        RatewellTables *loaded = NULL;
        s = ratewell_tables_load(path, &loaded);
        if (s != RATEWELL_OK) return fail("ratewell_tables_load", s);
        double *exc2 = malloc(n * sizeof *exc2), *deexc2 = malloc(n * sizeof *deexc2);
        uint32_t *flags2 = malloc(n * sizeof *flags2);
        s = ratewell_tables_evaluate(loaded, NULL, NULL, 0, temperatures, N_TEMPERATURES, RATEWELL_KELVIN,
                                     RATEWELL_CM3_PER_S, RATEWELL_REFUSE, exc2, deexc2, flags2, n);
        if (s != RATEWELL_OK) return fail("ratewell_tables_evaluate (loaded)", s);
        int same = memcmp(exc, exc2, n * sizeof *exc) == 0 && memcmp(deexc, deexc2, n * sizeof *deexc) == 0 &&
                   memcmp(flags, flags2, n * sizeof *flags) == 0;
        printf("file %s %s\n", same ? "same-bits" : "DIFFERENT", path);
        free(exc2);
        free(deexc2);
        free(flags2);
        ratewell_tables_free(loaded);
    }
    free(exc);
    free(deexc);
    free(flags);
    ratewell_tables_free(tables);
    ratewell_close(connection);
    return 0;
}
