"""The sweep job map: a cache keyed on every input, and no result lost to a failing job."""

import json
import os

import pytest
from cloakview.render.cli.main import main
from cloakview.render.sweeps.jobs import JobsFailed, local_pool, run_jobs
from scenes import RING, write_scene


def _setup():
    return "state"


def _half_fails(state, job):
    if job["i"] == 7:
        raise ValueError("this job is broken")
    return {"i": job["i"], "square": job["i"] ** 2, "state": state}


@pytest.mark.parametrize("workers", [1, 2])
def test_one_failing_job_keeps_every_other_result(tmp_path, workers):
    jobs = [{"i": i} for i in range(16)]
    with pytest.raises(JobsFailed) as failed:
        run_jobs(_half_fails, jobs, "t", _setup, workers=workers, cache=tmp_path)
    assert failed.value.finished == 15
    assert failed.value.failures[0][0] == {"i": 7}
    assert '1 of 16 jobs failed, the first with {"i": 7}' in str(failed.value)
    stored = [json.loads(p.read_text()) for p in (tmp_path / "jobs" / "t").glob("*.json")]
    assert sorted(r["i"] for r in stored) == [i for i in range(16) if i != 7]
    # The good results are reused; only the failed job runs again.
    results, reused = run_jobs(_half_fails, jobs[:7] + jobs[8:], "t", _setup, workers=workers,
                               cache=tmp_path)
    assert reused == 15 and [r["square"] for r in results] == [
        i * i for i in range(16) if i != 7]


def _counted_setup(log):
    with open(log, "a") as handle:  # one line per worker start
        handle.write(f"{os.getpid()}\n")
    return "state"


def _square(state, job):
    return {"i": job["i"], "square": job["i"] ** 2}


def test_a_shared_pool_serves_two_calls_with_the_same_workers(tmp_path):
    # Two passes of one analysis (a sweep, then its margin lines) start the workers once:
    # a pool of 2 never starts more than 2, where a pool per call would start 2 each.
    log = tmp_path / "starts.txt"
    with local_pool(_counted_setup, (str(log),), 2) as pool:
        for first in (0, 40):
            rows, _ = run_jobs(_square, [{"i": i} for i in range(first, first + 40)], "t",
                               _counted_setup, (str(log),), workers=2, cache=tmp_path,
                               pool=pool)
            assert [r["square"] for r in rows] == [i * i for i in range(first, first + 40)]
    starts = log.read_text().split()
    assert 1 <= len(starts) <= 2 and str(os.getpid()) not in starts


def _sweep(scene, out, *extra):
    assert main(["sightlines", str(scene), "--heights", "1150", "--lateral-range", "-20:20:20",
                 "--distance-range", "600:700:100", "--height-range", "1150:1150:25",
                 "--size", "32x24", "--workers", "1", "--out", str(out), "--json", *extra]) == 0
    return json.loads((out / "sightlines.json").read_text())


def test_an_edited_scene_picture_or_option_is_never_answered_from_the_cache(tmp_path):
    scene = write_scene(tmp_path / "s", layers=RING, render_extra="ideal = true")
    out = tmp_path / "out"
    first = _sweep(scene, out)
    assert first["reused"] == 0
    # The elevation line repeats the floor's on-axis points: those are one job each.
    distinct = len({(p["x"], p["d"], p["h"]) for p in first["points"]})
    again = _sweep(scene, out)
    assert again["reused"] == distinct and again["points"] == first["points"]
    # The scene file: move the object out of the cloaked ring.
    text = scene.read_text()
    scene.write_text(text.replace("z_mm = 222", "z_mm = 100"))
    assert _sweep(scene, out)["reused"] == 0
    scene.write_text(text)
    # A picture: same scene file, other pixels.
    picture = tmp_path / "s" / "art" / "poster.png"
    original = picture.read_bytes()
    import imageio.v3 as iio

    pixels = iio.imread(picture)
    iio.imwrite(picture, 255 - pixels)
    assert _sweep(scene, out)["reused"] == 0
    picture.write_bytes(original)
    # An option.
    assert _sweep(scene, out, "--ideal")["reused"] == 0
    # Back to the first inputs: those results are still there, and still right.
    back = _sweep(scene, out)
    assert back["reused"] == distinct and back["points"] == first["points"]
    assert _sweep(scene, out, "--fresh")["reused"] == 0


def test_an_edited_inventory_or_constraint_is_never_answered_from_the_cache(tmp_path):
    inventory = tmp_path / "lenses.csv"
    text = ("id,focal_length_mm,diameter_mm,center_thickness_mm,shape,material,price,quantity\n"
            "O180,180,50,5.6,biconvex,acrylic,40,2\nI60,60,50,13.6,biconvex,acrylic,55,2\n")
    inventory.write_text(text)
    out = tmp_path / "out"

    def choose(*extra):
        assert main(["choose", str(inventory), "--workers", "1", "--out", str(out), "--json",
                     *extra]) == 0
        return json.loads((out / "designs.json").read_text())

    first = choose()
    assert first["reused"] == 0 and first["designs"][0]["cost"] == 2 * (40 + 55)
    assert choose()["reused"] == 1
    inventory.write_text(text.replace(",40,2", ",70,2"))  # a new price for the outer lens
    again = choose()
    assert again["reused"] == 0 and again["designs"][0]["cost"] == 2 * (70 + 55)
    assert choose("--max-length", "5000")["reused"] == 0
