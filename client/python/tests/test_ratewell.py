"""The ratewell Python package against a real server (started by
scripts/python-package-check.sh, address in RATEWELL_SERVER; REFERENCE_BITS names the Rust
program that writes the Rust client's own evaluation for comparison)."""
import os
import subprocess
import tempfile
import threading
import time

import numpy as np
import pytest

import ratewell

SERVER = os.environ["RATEWELL_SERVER"]
SPECIES = "Mk III"


@pytest.fixture(scope="module")
def tables():
    return ratewell.Connection(SERVER, dataset="demo", time_budget_s=30).fetch_tables(SPECIES)


def rust_reference(temperatures):
    """The Rust client's local evaluation of SPECIES at exactly these temperature bits."""
    with tempfile.TemporaryDirectory() as work:
        t_path, out_path = os.path.join(work, "t.bin"), os.path.join(work, "out.bin")
        np.ascontiguousarray(temperatures, dtype="<f8").tofile(t_path)
        subprocess.run([os.environ["REFERENCE_BITS"], SERVER, SPECIES, t_path, out_path], check=True)
        raw = np.fromfile(out_path, dtype=np.uint8)
    return raw


def test_a_million_values_equal_the_rust_client_bit_for_bit(tables):
    n_tables = len(tables.transitions)
    temperatures = np.geomspace(20.0, 5.0e8, 1_000_000 // n_tables + 1)
    exc, deexc, flags = tables.evaluate(temperatures)
    assert exc.shape == (n_tables, temperatures.size) and exc.dtype == np.float64
    assert exc.size >= 1_000_000
    raw = rust_reference(temperatures)
    n = exc.size
    ref_exc = raw[: 8 * n].view("<u8")
    ref_deexc = raw[8 * n : 16 * n].view("<u8")
    ref_flags = raw[16 * n :].view("<u4")
    assert np.array_equal(exc.reshape(-1).view(np.uint64), ref_exc)
    assert np.array_equal(deexc.reshape(-1).view(np.uint64), ref_deexc)
    assert np.array_equal(flags.reshape(-1), ref_flags)


def test_the_stamp_names_the_dataset_and_digests(tables):
    s = tables.stamp
    assert s["id"] == "demo" and s["version"]
    assert len(s["content_hash"]) == 64 and len(s["table_set_digest"]) == 64


def test_units_transitions_and_extrapolation(tables):
    t_k = np.array([5.0e3, 1.0e4, 2.0e4])
    ev = t_k / 11604.518121550082  # K per eV, CODATA 2018
    exc_k, deexc_k, _ = tables.evaluate(t_k, transitions=[(2, 1)])
    exc_ev, _, _ = tables.evaluate(ev, transitions=[(2, 1)], temperature_unit="eV", rate_unit="m3/s")
    assert exc_k.shape == (1, 3)
    # 1 cm^3 = 1e-6 m^3 (SI); the eV temperatures round-trip to within a few ulps of K.
    np.testing.assert_allclose(exc_ev, exc_k * 1e-6, rtol=1e-12)
    _, _, flags = tables.evaluate(np.array([1.0e4, 5.0e9]), outside="extrapolate")
    assert (flags[:, 1] & ratewell.FLAG_OUTSIDE_GRID).all()
    assert not (flags[:, 0] & ratewell.FLAG_OUTSIDE_GRID).any()


def test_one_direction_gives_the_same_bits_and_none_for_the_other(tables):
    t_k = np.geomspace(3.0e3, 3.0e5, 50)
    exc, deexc, flags = tables.evaluate(t_k)
    only_e, none_d, flags_e = tables.evaluate(t_k, direction="excitation")
    none_e, only_d, flags_d = tables.evaluate(t_k, direction="deexcitation")
    assert none_d is None and none_e is None
    assert np.array_equal(only_e.view(np.uint64), exc.view(np.uint64))
    assert np.array_equal(only_d.view(np.uint64), deexc.view(np.uint64))
    assert np.array_equal(flags_e, flags) and np.array_equal(flags_d, flags)


@pytest.mark.parametrize(
    "kwargs, words",
    [
        (dict(temperatures=np.array([1e4, -5.0])), "temperatures[1] = -5 K: must be finite and > 0"),
        (dict(temperatures=np.array([np.nan])), "temperatures[0] = NaN K"),
        (dict(temperatures=np.array([5.0e9])), "outside the table grid"),
        (dict(temperatures=np.array([1e4]), temperature_unit="C"), 'temperature_unit = "C"'),
        (dict(temperatures=np.array([1e4]), outside="maybe"), 'outside = "maybe"'),
        (dict(temperatures=np.ones((2, 2))), "must be a 1-D array"),
        (dict(temperatures=np.array([1e4]), direction="up"), 'direction = "up"'),
    ],
)
def test_bad_input_raises_value_error_naming_the_argument(tables, kwargs, words):
    with pytest.raises(ValueError) as info:
        tables.evaluate(**kwargs)
    assert words in str(info.value)


def test_unknown_names_and_a_wrong_pin_raise_ratewell_errors(tables):
    with pytest.raises(ratewell.RatewellError) as info:
        tables.evaluate(np.array([1e4]), transitions=[(99, 1)])
    assert info.value.code == "not_found"
    conn = ratewell.Connection(SERVER, dataset="demo", pinned_hash="0" * 64, time_budget_s=10)
    with pytest.raises(ratewell.RatewellError) as info:
        conn.fetch_tables(SPECIES)
    assert info.value.code == "hash_mismatch"
    conn = ratewell.Connection(SERVER, dataset="demo", pin_tables_digest="0" * 64, time_budget_s=10)
    with pytest.raises(ratewell.RatewellError) as info:
        conn.fetch_tables(SPECIES)
    assert info.value.code == "hash_mismatch" and "tables digest" in str(info.value)
    dead = ratewell.Connection("http://127.0.0.1:1", dataset="demo", time_budget_s=2)
    with pytest.raises(ratewell.RatewellError) as info:
        dead.fetch_tables(SPECIES)
    assert info.value.code == "unavailable"


def test_connection_settings_are_checked_naming_the_setting(tmp_path):
    with pytest.raises(ValueError) as info:
        ratewell.Connection(SERVER, dataset="demo", token_file=tmp_path / "missing")
    assert "token_file = " in str(info.value) and "cannot be read" in str(info.value)
    with pytest.raises(ValueError) as info:
        ratewell.Connection(SERVER, dataset="demo", tls_server_name="svc")
    assert "needs tls_ca_file as well" in str(info.value)
    with pytest.raises(ValueError) as info:
        ratewell.Connection(SERVER, dataset="demo", wait_for_server_s=-1)
    assert "wait_for_server_s = -1" in str(info.value)
    token = tmp_path / "token"
    token.write_text("# a comment\nnot-a-token-this-server-knows\n")
    # The server of these checks knows no token: the one read from the file is sent, and
    # refused by name, which shows it travelled.
    conn = ratewell.Connection(SERVER, dataset="demo", token_file=token, wait_for_server_s=5,
                               fall_back_to_fetched_tables=True, time_budget_s=30)
    with pytest.raises(ratewell.RatewellError) as info:
        conn.fetch_tables(SPECIES)
    assert "bearer token is not one this server accepts" in str(info.value)
    assert "not-a-token" not in str(info.value)
    plain = ratewell.Connection(SERVER, dataset="demo", wait_for_server_s=5, time_budget_s=30)
    assert plain.fetch_tables(SPECIES).stamp["id"] == "demo"


def test_table_files_round_trip_and_damaged_files_are_refused(tables, tmp_path):
    path = tables.save(tmp_path)
    assert path.endswith(".rwtables") and tables.stamp["content_hash"][:16] in path
    loaded = ratewell.load_tables(path)
    t = np.geomspace(1e3, 1e7, 777)
    for a, b in zip(tables.evaluate(t), loaded.evaluate(t)):
        assert np.array_equal(a.view(np.uint8), b.view(np.uint8))
    data = bytearray(open(path, "rb").read())
    # A byte of a table (past the middle of the file) and a byte of the header: each is caught,
    # the first by the table-set digest, the second by the header's checksum.
    for at, problem in [(len(data) // 2, "table-set digest mismatch"), (20, "checksum mismatch")]:
        damaged = bytearray(data)
        damaged[at] ^= 1
        bad = tmp_path / "bad.rwtables"
        bad.write_bytes(bytes(damaged))
        with pytest.raises(ratewell.RatewellError) as info:
            ratewell.load_tables(bad)
        assert info.value.code == "table_file" and problem in str(info.value), str(info.value)


def test_the_cache_folder_serves_a_second_connection(tmp_path):
    first = ratewell.Connection(SERVER, dataset="demo", cache_dir=tmp_path).fetch_tables(SPECIES)
    pin = first.stamp["content_hash"]
    ratewell.Connection(SERVER, dataset="demo", pinned_hash=pin, cache_dir=tmp_path).fetch_tables(SPECIES)
    # The server is not needed once the folder holds the file for this pin.
    offline = ratewell.Connection("http://127.0.0.1:1", dataset="demo", pinned_hash=pin,
                                  cache_dir=tmp_path, time_budget_s=2).fetch_tables(SPECIES)
    assert offline.stamp["table_set_digest"] == first.stamp["table_set_digest"]


def test_population_grids_come_back_as_arrays():
    conn = ratewell.Connection(SERVER, dataset="demo", time_budget_s=30)
    t = np.array([8.0e3, 1.2e4])
    n = np.array([1e2, 1e4, 1e6])
    answer = conn.solve_populations(SPECIES, t, n, grid=True)
    fractions = answer["fractions"]
    assert fractions.shape == (2, 3, answer["level_count"])
    # Level fractions of each point sum to 1 (statistical equilibrium with sum n_j = 1).
    np.testing.assert_allclose(fractions.sum(axis=2), 1.0, rtol=1e-12)
    assert (fractions >= 0).all()
    assert answer["radiated_power_w"].shape == (2, 3)
    assert answer["stamp"]["id"] == "demo"


def test_evaluation_releases_the_gil(tables):
    """While one thread evaluates a large batch, another Python thread keeps running: with
    the GIL held it could not tick at all until the evaluation returned."""
    temperatures = np.geomspace(1e3, 1e8, 400_000)
    ticks = []
    done = threading.Event()

    def ticker():
        while not done.is_set():
            ticks.append(time.perf_counter())
            time.sleep(0.0005)

    start = time.perf_counter()
    tables.evaluate(temperatures)  # warm-up: measure one evaluation alone
    alone = time.perf_counter() - start
    thread = threading.Thread(target=ticker)
    thread.start()
    time.sleep(0.01)
    begin = time.perf_counter()
    tables.evaluate(temperatures)
    end = time.perf_counter()
    done.set()
    thread.join()
    during = [t for t in ticks if begin < t < end]
    assert alone > 0.02, f"evaluation too quick ({alone:.4f} s) to show anything"
    assert len(during) >= 3, f"the other thread ticked {len(during)} times during {end - begin:.3f} s"
