"""Studies on a 2-worker Dask LocalCluster equal the command line's, whatever the split."""

import json

import pytest

pytest.importorskip("distributed")

import kickturn  # noqa: E402
import kickturn.dask as kd  # noqa: E402
from conftest import GUIDED, MEDIUM, cli_json  # noqa: E402


@pytest.fixture(scope="module")
def client():
    from distributed import Client, LocalCluster

    # Two worker processes, every port on loopback and chosen by the system.
    with LocalCluster(
        n_workers=2,
        threads_per_worker=1,
        processes=True,
        host="127.0.0.1",
        dashboard_address="127.0.0.1:0",
    ) as cluster, Client(cluster) as c:
        yield c


def test_batches_cover_the_items_in_order():
    assert kd.batches(list(range(7)), 3) == [[0, 1, 2], [3, 4, 5], [6]]
    assert kd.batches([], 2) == []
    with pytest.raises(ValueError):
        kd.batches([1], 0)


@pytest.mark.parametrize("batch_size", [1, 3, None])
def test_a_sweep_on_two_workers_equals_the_command_line_sweep_point_for_point(
    client, batch_size
):
    want = cli_json("sweep", MEDIUM, "--altitude", "200:260:20")
    frame = kd.sweep(client, MEDIUM, altitude="200:260:20", batch_size=batch_size)
    assert frame.attrs["report"] == want
    assert list(frame["swept_altitude_km"]) == [200.0, 220.0, 240.0, 260.0]
    assert list(frame["status"]) == [p["status"] for p in want["points"]]
    assert list(frame["payload_kg"]) == [p["report"]["payload_kg"] for p in want["points"]]
    assert list(frame["margin_kg"]) == [p["report"]["margin_kg"] for p in want["points"]]


def test_without_a_frame_the_sweep_is_the_document(client):
    got = kd.sweep(client, MEDIUM, inclination=[51.6, 60.0], batch_size=1, as_frame=False)
    assert got == kickturn.sweep(MEDIUM, inclination=[51.6, 60.0])


def test_a_trade_on_two_workers_equals_the_command_line_trade(client):
    want = cli_json("trade", MEDIUM)
    frame = kd.trade(client, MEDIUM, batch_size=4)
    assert frame.attrs["report"] == want
    assert list(frame["parameter"]) == [f["name"] for f in want["factors"]]
    assert list(frame["factor"]) == [f["factor"] for f in want["factors"]]
    assert len(frame.attrs["points"]) == 2 * len(want["factors"])


def test_bad_input_is_raised_on_the_client_before_any_task(client):
    d = json.loads(MEDIUM.read_text())
    d["vehicle"]["stages"][0]["dry_mass_kg"] = "heavy"
    with pytest.raises(kickturn.ProblemError) as e:
        kd.sweep(client, d, altitude=[200.0])
    assert e.value.field == "vehicle.stages[0].dry_mass_kg"
    with pytest.raises(kickturn.OptionError, match="max_trajectories"):
        kd.trade(client, MEDIUM, max_trajectories=0)


def test_an_error_on_a_worker_arrives_as_the_same_exception_with_its_field(client):
    d = json.loads(MEDIUM.read_text())
    d["vehicle"]["stages"][1]["isp_vac_s"] = -3.0
    with pytest.raises(kickturn.ProblemError) as e:
        kd.map_batches(client, kd._trade_batch, [0, 1], json.dumps(d), None)
    assert e.value.field == "vehicle.stages[1].isp_vac_s"


@pytest.mark.parametrize("batch_size", [1, 3])
def test_a_trade_grid_on_two_workers_equals_the_single_process_grid(client, batch_size):
    axes = {"altitude": [200.0, 250.0], "payload": [7000.0, 8000.0]}
    want = kickturn.grid(MEDIUM, axes)
    frame = kd.grid(client, MEDIUM, axes, batch_size=batch_size)
    assert frame.attrs["report"] == want
    assert list(frame["swept_altitude_km"]) == [200.0, 200.0, 250.0, 250.0]
    assert list(frame["swept_payload_kg"]) == [7000.0, 8000.0, 7000.0, 8000.0]
    assert list(frame["margin_kg"]) == [p["report"]["margin_kg"] for p in want["points"]]


@pytest.fixture(scope="module")
def dispersions_40():
    return kickturn.dispersions(GUIDED, samples=40, seed=7)


@pytest.mark.parametrize("batch_size", [7, 40])
def test_dispersions_on_two_workers_equal_the_single_process_run(
    client, dispersions_40, batch_size
):
    frame = kd.dispersions(client, GUIDED, samples=40, seed=7, batch_size=batch_size)
    assert frame.attrs["report"] == dispersions_40
    runs = dispersions_40["runs"]
    assert list(frame["index"]) == list(range(40))
    assert list(frame["propellant_remaining_kg"]) == [s["propellant_remaining_kg"] for s in runs]
    assert list(frame["target_met"]) == [s["target_met"] for s in runs]
    first = dispersions_40["variables"][0]["name"]
    assert list(frame[first]) == [s["draws"][0] for s in runs]


def test_dispersions_without_a_frame_are_the_command_line_document(client):
    want = cli_json("dispersions", GUIDED, "--samples", "10", "--seed", "2", "--open-loop")
    got = kd.dispersions(client, GUIDED, samples=10, seed=2, open_loop=True, as_frame=False)
    assert got == want


def test_bad_dispersion_options_are_raised_on_the_client(client):
    with pytest.raises(kickturn.OptionError, match="samples: must lie in"):
        kd.dispersions(client, GUIDED, samples=0)
