"""Sweeps on Dask distributed give the same results as on the local process pool.

A LocalCluster (2 workers, 1 thread each) stands in for a real cluster; one test starts a
scheduler and two workers as separate processes with Dask's own command-line programs, as
a user would on several machines.
"""

import json
import os
import shutil
import signal
import subprocess
import sys
import threading
import time

import pytest
from cloakview.render.cli.main import main
from scenes import RING, write_scene

distributed = pytest.importorskip("distributed")

INVENTORY = ("id,focal_length_mm,diameter_mm,center_thickness_mm,shape,material,price,quantity\n"
             "O180,180,50,5.6,biconvex,acrylic,40,2\nI60,60,50,13.6,biconvex,acrylic,55,2\n"
             "S120,120,50,6.5,biconvex,soda-lime,30,4\n")
SWEEP = ["--heights", "1150", "--lateral-range", "-20:20:10", "--distance-range",
         "600:800:100", "--height-range", "1100:1200:50", "--size", "32x24"]


@pytest.fixture(scope="module")
def cluster():
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=":0", silence_logs=50) as local:
        yield local


@pytest.fixture
def exhibit(tmp_path):
    scene = write_scene(tmp_path / "s", layers=RING, width=32, height=24)
    inventory = tmp_path / "lenses.csv"
    inventory.write_text(INVENTORY)
    return tmp_path, scene, inventory


def _without_timings(path):
    data = json.loads(path.read_text())
    for key in ("seconds", "reused"):
        data.pop(key, None)
    return data


def _both(tmp_path, argv, scheduler):
    """Run ``argv`` on the local pool and on ``scheduler``, each computing afresh."""
    assert main([*argv, "--workers", "2", "--fresh", "--out", str(tmp_path / "pool")]) == 0
    assert main([*argv, "--scheduler", scheduler, "--fresh",
                 "--out", str(tmp_path / "dask")]) == 0
    return tmp_path / "pool", tmp_path / "dask"


def test_sightlines_tolerance_walk_and_choose_match_the_local_pool(exhibit, cluster, capsys):
    folder, scene, inventory = exhibit
    address = cluster.scheduler_address
    pool, dask = _both(folder / "sl", ["sightlines", str(scene), *SWEEP, "--json"], address)
    assert _without_timings(pool / "sightlines.json") == _without_timings(dask / "sightlines.json")
    pool, dask = _both(folder / "tol", ["tolerance", str(scene), "--builds", "3", "--size",
                                        "24x16", "--json"], address)
    assert _without_timings(pool / "tolerance.json") == _without_timings(dask / "tolerance.json")
    assert (pool / "builds.csv").read_bytes() == (dask / "builds.csv").read_bytes()
    pool, dask = _both(folder / "walk", ["walk", str(scene), "--frames", "3", "--json"],
                       address)
    assert (pool / "walk.csv").read_bytes() == (dask / "walk.csv").read_bytes()
    for i in range(3):
        frame = f"frames/frame_{i:05d}.png"
        assert (pool / frame).read_bytes() == (dask / frame).read_bytes()
    pool, dask = _both(folder / "choose", ["choose", str(inventory), "--json"], address)
    assert _without_timings(pool / "designs.json") == _without_timings(dask / "designs.json")
    capsys.readouterr()


def test_local_cluster_keyword_starts_its_own_cluster(exhibit):
    folder, scene, _ = exhibit
    pool, dask = _both(folder, ["sightlines", str(scene), *SWEEP, "--json"], "local-cluster")
    assert _without_timings(pool / "sightlines.json") == _without_timings(dask / "sightlines.json")


def test_a_worker_killed_mid_sweep_still_completes_the_sweep(exhibit, cluster, capsys):
    folder, scene, _ = exhibit
    argv = ["sightlines", str(scene), "--heights", "1150", "--lateral-range", "-60:60:5",
            "--distance-range", "600:1000:100", "--height-range", "1150:1150:25", "--size",
            "96x54", "--scheduler", cluster.scheduler_address, "--json", "--out",
            str(folder / "o")]
    outcome = {}
    sweep = threading.Thread(target=lambda: outcome.update(code=main(argv)))
    sweep.start()
    client = distributed.Client(cluster.scheduler_address)
    try:
        deadline = time.monotonic() + 60
        while sum(client.processing().values(), ()) == () and time.monotonic() < deadline:
            time.sleep(0.05)  # wait until the workers have tasks in hand
        victim = next(iter(client.run(os.getpid).values()))
        os.kill(victim, signal.SIGKILL)
    finally:
        client.close()
    sweep.join(timeout=300)
    assert outcome.get("code") == 0
    result = json.loads((folder / "o" / "sightlines.json").read_text())
    assert len(result["points"]) == 25 * 5 + 5  # every floor point and elevation point
    capsys.readouterr()


def test_an_unreachable_scheduler_is_one_clear_line(exhibit, capsys):
    folder, scene, _ = exhibit
    assert main(["sightlines", str(scene), *SWEEP, "--scheduler", "tcp://127.0.0.1:9",
                 "--out", str(folder / "o")]) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith("cloakview: error: --scheduler = 'tcp://127.0.0.1:9': cannot reach")
    assert "\n" not in err and not (folder / "o").exists()


def test_without_dask_the_error_names_the_extra(exhibit, monkeypatch, capsys):
    folder, scene, _ = exhibit
    monkeypatch.setitem(sys.modules, "distributed", None)  # import fails as if not installed
    assert main(["sightlines", str(scene), *SWEEP, "--scheduler", "local-cluster",
                 "--out", str(folder / "o")]) == 2
    assert "pip install 'cloakview[cluster]'" in capsys.readouterr().err


@pytest.mark.skipif(shutil.which("dask") is None, reason="Dask's command-line program")
def test_a_scheduler_and_workers_started_as_separate_programs(exhibit, tmp_path):
    folder, scene, _ = exhibit
    address_file = tmp_path / "scheduler.json"
    programs = [subprocess.Popen(["dask", "scheduler", "--port", "0", "--no-dashboard",
                                  "--scheduler-file", str(address_file)],
                                 stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)]
    try:
        deadline = time.monotonic() + 60
        while not address_file.is_file() and time.monotonic() < deadline:
            time.sleep(0.1)
        address = json.loads(address_file.read_text())["address"]
        for _ in range(2):
            programs.append(subprocess.Popen(
                ["dask", "worker", address, "--nthreads", "1", "--no-dashboard"],
                stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL))
        with distributed.Client(address) as client:
            client.wait_for_workers(2, timeout=60)
        pool, dask = _both(folder, ["sightlines", str(scene), *SWEEP, "--json"], address)
        assert _without_timings(pool / "sightlines.json") == \
            _without_timings(dask / "sightlines.json")
    finally:
        for program in programs:
            program.terminate()
        for program in programs:
            program.wait(timeout=30)
