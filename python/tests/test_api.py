"""kickturn from Python: the documents equal the command line's --json, errors carry its
messages and the bad field's path."""

import copy
import hashlib
import json
import pickle

import pytest

import kickturn
from conftest import GUIDED, MEDIUM, PROBLEMS, SMALL, cli_json, run_cli

MEDIUM_REL = "problems/medium-2stage-leo200.json"


def medium_dict():
    return json.loads(MEDIUM.read_text())


@pytest.mark.parametrize("problem", PROBLEMS, ids=lambda p: p.name)
def test_fly_equals_the_command_line_json(problem):
    assert kickturn.fly(problem) == cli_json("fly", problem)


def test_fly_of_the_medium_demo_reaches_orbit_with_the_known_final_mass(in_root):
    run = kickturn.fly(MEDIUM_REL)
    assert run["status"] == "orbit"
    # Pinned from `kickturn fly problems/medium-2stage-leo200.json --json` (this commit).
    assert run["final_mass_kg"] == pytest.approx(14929.006053502071, rel=1e-9)
    assert abs(run["budget"]["closure_error_mps"]) < 1e-3
    assert run["caution"] == kickturn.CAUTION


def test_a_dict_flies_like_its_file_and_hashes_the_text_written_for_it():
    d = medium_dict()
    from_dict = kickturn.fly(d)
    from_file = kickturn.fly(MEDIUM)
    text = json.dumps(d)
    assert from_dict["input_sha256"] == hashlib.sha256(text.encode()).hexdigest()
    from_dict.pop("input_sha256")
    from_file.pop("input_sha256")
    assert from_dict == from_file


def test_solve_equals_the_command_line_json():
    assert kickturn.solve(MEDIUM) == cli_json("solve", MEDIUM)


def test_solve_options_are_the_command_line_options():
    got = kickturn.solve(MEDIUM, max_payload=True, max_trajectories=2000)
    assert got == cli_json("solve", MEDIUM, "--max-payload", "--max-trajectories", "2000")
    assert got["convergence"]["trajectories"] <= 2000


def test_refine_equals_the_command_line_refine():
    got = kickturn.solve(MEDIUM, refine=True, refine_nodes=10)
    assert got == cli_json("solve", MEDIUM, "--refine", "--refine-nodes", "10")
    assert got["refinement"]["nodes_per_arc"] == 10
    assert got["refinement"]["gap_kg"] >= 0.0


def test_a_sweep_equals_the_command_line_sweep_point_for_point():
    want = cli_json("sweep", MEDIUM, "--altitude", "200:240:20")
    assert kickturn.sweep(MEDIUM, altitude="200:240:20") == want
    assert kickturn.sweep(MEDIUM, altitude=[200, 220.0, 240]) == want


def test_compare_equals_the_command_line_compare():
    assert kickturn.compare([MEDIUM, SMALL]) == cli_json("compare", MEDIUM, SMALL)


def test_a_bad_field_raises_problem_error_with_its_path_and_the_command_line_message(tmp_path):
    d = medium_dict()
    d["vehicle"]["stages"][1]["isp_vac_s"] = -3.0
    with pytest.raises(kickturn.ProblemError) as e:
        kickturn.fly(d)
    assert e.value.field == "vehicle.stages[1].isp_vac_s"
    assert e.value.file is None
    assert isinstance(e.value, ValueError)
    # The same problem as a file: the command line's message, file name and all.
    path = tmp_path / "bad.json"
    path.write_text(json.dumps(d))
    with pytest.raises(kickturn.ProblemError) as e:
        kickturn.fly(path)
    _, err = run_cli("fly", path, expect=2)
    assert err == f"error: {e.value}\n"
    assert e.value.file == str(path)
    assert e.value.reason in str(e.value)


def test_an_unknown_key_is_a_problem_error_at_its_path_with_the_hint():
    d = medium_dict()
    stage = d["vehicle"]["stages"][1]
    stage["isp_vac"] = stage.pop("isp_vac_s")
    with pytest.raises(kickturn.ProblemError) as e:
        kickturn.solve(d)
    assert e.value.field == "vehicle.stages[1].isp_vac"
    assert "did you mean `isp_vac_s`?" in e.value.reason


def test_a_study_of_an_invalid_problem_is_a_problem_error():
    d = medium_dict()
    d["vehicle"]["payload_kg"] = -1.0
    with pytest.raises(kickturn.ProblemError) as e:
        kickturn.sweep(d, altitude=[200.0])
    assert e.value.field.startswith("vehicle.payload_kg")


def test_an_unreachable_inclination_raises_with_the_command_line_json(tmp_path):
    d = medium_dict()
    d["launch"]["inclination_deg"] = 20.0
    d["target"]["inclination_deg"] = 20.0
    path = tmp_path / "low.json"
    path.write_text(json.dumps(d))
    with pytest.raises(kickturn.UnreachableError) as e:
        kickturn.fly(path)
    assert e.value.info == cli_json("fly", path, expect=1)
    assert e.value.info["field"] == "launch.inclination_deg"


def test_options_out_of_range_raise_option_error():
    with pytest.raises(kickturn.OptionError, match="max_trajectories: must lie in"):
        kickturn.solve(MEDIUM, max_trajectories=0)
    with pytest.raises(kickturn.OptionError, match="unknown group `wings`"):
        kickturn.solve(MEDIUM, free=["wings"])
    with pytest.raises(kickturn.OptionError, match="altitude: `200:100:10`"):
        kickturn.sweep(MEDIUM, altitude="200:100:10")
    with pytest.raises(kickturn.OptionError, match="exactly one of"):
        kickturn.sweep(MEDIUM, altitude=[200.0], azimuth=[90.0])
    with pytest.raises(kickturn.OptionError, match="contradict"):
        kickturn.sweep(MEDIUM, payload=[100.0], max_payload=True)


def test_a_missing_file_is_file_not_found():
    with pytest.raises(FileNotFoundError):
        kickturn.fly("no/such/problem.json")


def test_errors_and_functions_survive_pickling():
    e = kickturn.ProblemError("f.json: a.b: bad", "a.b", "bad", "f.json")
    back = pickle.loads(pickle.dumps(e))
    assert (type(back), str(back), back.field, back.reason, back.file) == (
        kickturn.ProblemError, "f.json: a.b: bad", "a.b", "bad", "f.json")
    u = kickturn.UnreachableError("m", json.dumps({"field": "launch.inclination_deg"}))
    assert pickle.loads(pickle.dumps(u)).info == {"field": "launch.inclination_deg"}
    for f in (kickturn.fly, kickturn.solve, kickturn.sweep, kickturn.compare, kickturn.trade):
        assert pickle.loads(pickle.dumps(f)) is f


def test_the_input_dict_is_left_as_it_was():
    d = medium_dict()
    before = copy.deepcopy(d)
    kickturn.fly(d)
    assert d == before


def test_threads_fly_at_once_with_the_same_results():
    # The interpreter is released while flying: calls from several threads run side by side.
    from concurrent.futures import ThreadPoolExecutor

    want = kickturn.fly(MEDIUM)
    with ThreadPoolExecutor(4) as pool:
        got = list(pool.map(kickturn.fly, [MEDIUM] * 8))
    assert all(g == want for g in got)


def test_study_documents_become_frames_in_the_csv_columns():
    pd = pytest.importorskip("pandas")
    import kickturn.frames as frames

    report = kickturn.compare([MEDIUM, SMALL], max_trajectories=3000)
    frame = frames.compare_frame(report)
    assert isinstance(frame, pd.DataFrame)
    assert list(frame["problem"]) == [name for name, _ in report["problems"]]
    assert list(frame.columns[4:]) == list(frames.POINT_COLUMNS)
    head, _ = run_cli("compare", MEDIUM, SMALL, "--max-trajectories", "3000", "--csv", "-")
    csv_columns = head.splitlines()[0].split(",")
    assert csv_columns == ["problem", "swept_index", "status", *frames.POINT_COLUMNS]


def test_a_grid_row_is_the_sweep_of_the_problem_with_the_first_axis_applied():
    grid = kickturn.grid(MEDIUM, {"altitude": [200.0, 250.0], "payload": "7000:8000:1000"})
    assert grid["axes"] == ["altitude", "payload"]
    assert grid["rows"] == [[200.0, 7000.0], [200.0, 8000.0], [250.0, 7000.0], [250.0, 8000.0]]
    d = medium_dict()
    d["target"]["perigee_alt_km"] = d["target"]["apogee_alt_km"] = 250.0
    assert grid["points"][2:] == kickturn.sweep(d, payload=[7000.0, 8000.0])["points"]
    # A one-axis grid is the sweep.
    one = kickturn.grid(MEDIUM, {"altitude": [200.0, 250.0]})
    assert one["points"] == kickturn.sweep(MEDIUM, altitude=[200.0, 250.0])["points"]
    with pytest.raises(kickturn.OptionError, match="no axis"):
        kickturn.grid(MEDIUM, {"mass": [1.0]})
    with pytest.raises(kickturn.OptionError, match="contradict"):
        kickturn.grid(MEDIUM, {"altitude": [200.0], "payload": [1.0]}, max_payload=True)


def test_dispersions_equal_the_command_line_json():
    want = cli_json("dispersions", GUIDED, "--samples", "40", "--seed", "7")
    got = kickturn.dispersions(GUIDED, samples=40, seed=7)
    assert got == want
    assert got["samples"] == 40 and len(got["runs"]) == 40
    assert [s["index"] for s in got["runs"]] == list(range(40))
    assert got["nominal_target_met"] is True


def test_dispersion_options_are_the_command_line_options():
    args = ["--samples", "12", "--seed", "3", "--open-loop", "--probability", "0.99"]
    args += ["--confidence", "0.5", "--apsis-tol-km", "2", "--inclination-tol-deg", "0.05"]
    want = cli_json("dispersions", GUIDED, *args)
    got = kickturn.dispersions(
        GUIDED, samples=12, seed=3, open_loop=True, probability=0.99, confidence=0.5,
        apsis_tol_km=2.0, inclination_tol_deg=0.05,
    )
    assert got == want
    assert got["open_loop"] is True and got["reserve"]["probability"] == 0.99


def test_dispersion_samples_of_any_split_build_the_same_report():
    whole = kickturn.dispersions(GUIDED, samples=6, seed=5)
    text, file = kickturn.read_problem(GUIDED)
    part = json.loads(kickturn._kickturn.dispersion_samples(text, file, [4, 1], samples=6, seed=5))
    assert part == [whole["runs"][4], whole["runs"][1]]
    runs = json.dumps(whole["runs"])
    again = kickturn._kickturn.dispersion_report(text, file, runs, samples=6, seed=5)
    assert json.loads(again) == whole
    with pytest.raises(kickturn.OptionError, match="samples: 6 samples given for a study of 7"):
        kickturn._kickturn.dispersion_report(text, file, runs, samples=7, seed=5)
    with pytest.raises(kickturn.OptionError, match="indices: sample 6 is not in a study of 6"):
        kickturn._kickturn.dispersion_samples(text, file, [6], samples=6, seed=5)


def test_dispersion_errors_name_the_option_or_the_field():
    with pytest.raises(kickturn.OptionError, match="samples: must lie in"):
        kickturn.dispersions(GUIDED, samples=0)
    with pytest.raises(kickturn.OptionError, match="probability: must lie in"):
        kickturn.dispersions(GUIDED, samples=5, probability=1.5)
    d = json.loads(GUIDED.read_text())
    d["dispersions"]["isp_s"]["normal_3sigma"] = -1.0
    with pytest.raises(kickturn.ProblemError) as e:
        kickturn.dispersions(d, samples=5)
    assert e.value.field.startswith("dispersions.isp_s"), e.value.field
