"""fanfold under mpirun (docs/mpi.md): rank 0 coordinates, the other ranks
are node agents with local workers. Checked here, on one machine:

* every job in jobs/ and a generated set of 300 shards give, under
  `mpirun -np 2, 3, 4` with 1-2 workers per agent, stdout byte-identical to
  the local run;
* SIGKILL of an agent rank mid-run: mpirun exits non-zero, no shared-memory
  segment and no worker or guardian process of that run is left, and
  `resume` (locally, and under mpirun) gives the bytes of an uninterrupted
  run;
* a shard file changed after the shard list was made (its mtime) fails that
  shard on the agent with a message naming the path, the node and both
  identities; the run exits 1.

Skipped, with the reason, only when mpirun is not installed or this fanfold
was built without MPI. mpirun runs with the options the Open MPI 4.1
documentation gives for a root user in a container on one machine
(--allow-run-as-root via OMPI_ALLOW_RUN_AS_ROOT*, oversubscription, the ob1
pml with the self and vader transports, no single-copy mechanism).
"""

import glob
import json
import os
import shutil
import signal
import subprocess
import sys
import time
import uuid

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402

MPI_ENV = {
    "OMPI_ALLOW_RUN_AS_ROOT": "1",
    "OMPI_ALLOW_RUN_AS_ROOT_CONFIRM": "1",
    "OMPI_MCA_rmaps_base_oversubscribe": "1",
    "OMPI_MCA_pml": "ob1",
    "OMPI_MCA_btl": "self,vader",
    "OMPI_MCA_btl_vader_single_copy_mechanism": "none",
}


def mpirun(env, np, argv, extra_env=None, timeout=120, background=False):
    e = dict(os.environ)
    e.update(MPI_ENV)
    # Under the sanitizer build: Open MPI keeps allocations of MPI_Init in
    # components it unloads at MPI_Finalize, which LeakSanitizer reports as
    # leaks of "<unknown module>" (no suppression can name them). Leak
    # checking stays on for every local run; address and UB checks stay on
    # here.
    e["ASAN_OPTIONS"] = ":".join(x for x in [e.get("ASAN_OPTIONS", ""), "detect_leaks=0"] if x)
    if extra_env:
        e.update(extra_env)
    cmd = ["mpirun", "-np", str(np), env.fanfold] + [str(a) for a in argv]
    if background:
        return subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=e, cwd=env.tmp)
    try:
        done = subprocess.run(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=e, cwd=env.tmp,
                              timeout=timeout)
    except subprocess.TimeoutExpired as x:
        return -9, b"", (x.stderr or b"") + b"\n[timed out]"
    return done.returncode, done.stdout, done.stderr


def local(env, argv, extra_env=None, timeout=120):
    e = dict(os.environ)
    if extra_env:
        e.update(extra_env)
    done = subprocess.run([env.fanfold] + [str(a) for a in argv], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                          env=e, cwd=env.tmp, timeout=timeout)
    return done.returncode, done.stdout, done.stderr


def processes_with(marker):
    """(pid, comm) of live processes whose environment holds marker."""
    out = []
    for d in glob.glob("/proc/[0-9]*"):
        try:
            with open(d + "/environ", "rb") as f:
                if marker.encode() not in f.read():
                    continue
            with open(d + "/stat") as f:
                stat = f.read()
            if stat.split(") ")[-1].split()[0] == "Z":
                continue
            with open(d + "/comm") as f:
                out.append((int(d[6:]), f.read().strip()))
        except OSError:
            pass
    return out


def parent_of(pid):
    try:
        with open("/proc/%d/stat" % pid) as f:
            return int(f.read().split(") ")[-1].split()[1])
    except (OSError, ValueError, IndexError):
        return 0


def agent_pid(marker, rank):
    """The node agent of `rank`: a fanfold process of that rank whose parent
    is not itself a fanfold (the agent's segment guardian is its child)."""
    mine = {p for p, c in processes_with(marker) if c == "fanfold"}
    for p in mine:
        try:
            with open("/proc/%d/environ" % p, "rb") as f:
                if b"OMPI_COMM_WORLD_RANK=%d\0" % rank not in f.read():
                    continue
        except OSError:
            continue
        if parent_of(p) not in mine:
            return p
    return 0


def stall_faults(shards, ms):
    return "inject:" + ";".join("stall:shard=%d,ms=%d" % (s, ms) for s in range(shards))


def main():
    args = lib.parse_args(__doc__)
    checks = lib.Checks("test_mpi")
    if shutil.which("mpirun") is None:
        print("test_mpi: SKIPPED: mpirun is not installed (Debian: openmpi-bin libopenmpi-dev)")
        sys.exit(0)
    with lib.Env(args) as env:
        rc, out, err = mpirun(env, 2, ["--version"], timeout=60)
        if b"built without MPI" in err:
            print("test_mpi: SKIPPED: this fanfold was built without MPI (FANFOLD_MPI=OFF or no MPI found)")
            sys.exit(0)
        # Intent: an MPI launch of a command that runs no shards releases the agents: exit 0, no hang.
        checks.check(rc == 0 and b"fanfold" in out, "mpirun -np 2 fanfold --version: exit %d: %s" % (rc, err[-800:]))
        # Intent: a usage error on rank 0 still releases the agents (exit 2 through mpirun, no hang).
        rc, _, err = mpirun(env, 3, ["run", "/nonexistent/job.json"], timeout=60)
        checks.check(rc not in (0, -9), "mpirun with a missing job file: exit %d (want non-zero, no hang)" % rc)

        # ---- byte identity: every demo job and a generated set
        jobs = sorted(glob.glob(os.path.join(env.src, "jobs", "*.json")))
        data = os.path.join(env.tmp, "gen")
        env.generate(data, "--shards", 300, "--records", 40, "--seed", 1616, "--bad-rate", 0.01)
        # The generated NDJSON shards through a demo job's questions.
        with open(os.path.join(env.src, "jobs", "fault_share.json")) as f:
            gen_job = json.load(f)
        gen_job["inputs"]["files"] = [os.path.join(data, "*.ndjson.zst")]
        gen_path = lib.write_job(env.path("gen_job.json"), gen_job)
        cases = [(os.path.basename(j), j) for j in jobs] + [("generated-300", gen_path)]
        configs = [(2, 2), (3, 1), (4, 1), (4, 2)]
        for i, (name, job) in enumerate(cases):
            rc, want, err = local(env, ["run", job, "-o", "-", "-q", "-j", 2, "--run-dir",
                                        env.path("loc", name)])
            if not checks.check(rc == 0, "%s locally: exit %d: %s" % (name, rc, err[-800:])):
                continue
            # The generated set under every rank count; demo jobs under two.
            chosen = configs if name == "generated-300" else [configs[i % 4], configs[(i + 1) % 4]]
            for np, j in chosen:
                rc, got, err = mpirun(env, np, ["run", job, "-o", "-", "-q", "-j", j, "--run-dir",
                                                env.path("mpi-%d-%d" % (np, j), name)])
                # Intent: the MPI transport changes nothing in the result bytes.
                checks.check(rc == 0 and got == want,
                             "%s under mpirun -np %d -j %d: exit %d, %s: %s" %
                             (name, np, j, rc, "same bytes" if got == want else "DIFFERENT bytes", err[-800:]))
        # Intent: partials cut into many pieces (test-only piece size of 64 bytes) arrive whole.
        rc, want, _ = local(env, ["run", gen_path, "-o", "-", "-q", "-j", 2, "--run-dir", env.path("piece-ref")])
        rc2, got, err = mpirun(env, 3, ["run", gen_path, "-o", "-", "-q", "-j", 1, "--run-dir", env.path("pieces")],
                               extra_env={"FANFOLD_TEST_ONLY_MPI_PIECE_BYTES": "64"})
        checks.check(rc == 0 and rc2 == 0 and got == want,
                     "64-byte pieces under mpirun -np 3: exit %d, %s: %s" %
                     (rc2, "same bytes" if got == want else "DIFFERENT bytes", err[-800:]))
        # Intent: the journal names the node of every attempt of an MPI run.
        with open(env.path("mpi-3-1", "generated-300", "journal.ndjson")) as f:
            jl = [json.loads(line) for line in f]
        attempts = [e for e in jl if e.get("event") == "attempt"]
        checks.check(attempts and all(str(e.get("node", "")).startswith("rank ") for e in attempts),
                     "journal attempts of an MPI run name their node: %s" % (attempts[:1],))

        # Intent: summary.json and the journal's start line count every agent's workers (-np 4 -j 2: 3 x 2).
        with open(env.path("mpi-4-2", "generated-300", "summary.json")) as f:
            summary = json.load(f)
        with open(env.path("mpi-4-2", "generated-300", "journal.ndjson")) as f:
            starts = [e for e in map(json.loads, f) if e.get("event") == "start"]
        checks.check(summary.get("workers") == 6 and starts and starts[-1].get("workers") == 6,
                     "workers of an MPI run: summary %s, start line %s (want 6)" %
                     (summary.get("workers"), starts[-1:]))
        # Intent: the HTML report and the timings export show the node of each attempt of an MPI run.
        html, timings = env.path("mpi-report.html"), env.path("mpi-timings.json")
        rc, _, err = local(env, ["report", env.path("mpi-3-1", "generated-300"), "-o", html, "--timings-json", timings,
                                 "-q"])
        if checks.check(rc == 0, "report of an MPI run: exit %d: %s" % (rc, err[-600:])):
            with open(html) as f:
                page = f.read()
            with open(timings) as f:
                rows = json.load(f)
            checks.check('<span class="node">rank 1 on ' in page and '<span class="node">rank 2 on ' in page,
                         "the report's shard table names ranks 1 and 2")
            checks.check(rows and all(r.get("node", "").startswith("rank ") for r in rows),
                         "every exported attempt of the MPI run has its node: %s" % (rows[:1],))

        # ---- a worker dying on a node: retried there, the agent goes on
        rc, gen_want, _ = local(env, ["run", gen_path, "-o", "-", "-q", "-j", 2, "--run-dir", env.path("crash-ref")])
        crash_dir = env.path("crash-mpi")
        rc, got, err = mpirun(env, 3, ["run", gen_path, "-o", "-", "-q", "-j", 1, "--run-dir", crash_dir],
                              extra_env={"FANFOLD_TEST_ONLY_FAULTS":
                                         "inject:crash:shard=5,attempt=1;crash:shard=200,attempt=1"})
        # Intent: worker crashes under an agent are retried like local ones; the result is unchanged.
        checks.check(rc == 0 and got == gen_want, "two worker crashes under mpirun: exit %d, %s: %s" %
                     (rc, "same bytes" if got == gen_want else "DIFFERENT bytes", err[-800:]))
        with open(os.path.join(crash_dir, "journal.ndjson")) as f:
            died = [e for e in map(json.loads, f) if e.get("event") == "attempt" and e.get("outcome") == "died"]
        checks.check(sorted(e["shard"] for e in died) == [5, 200] and all(not e["final"] for e in died),
                     "the journal has the two crashed attempts, retried: %s" % died)

        # ---- the per-shard time limit reaches a worker on a node (started + abort messages)
        rc, _, err = mpirun(env, 2, ["run", gen_path, "-o", "-", "-q", "-j", 2, "--attempts", 1,
                                     "--shard-time-limit", 1, "--run-dir", env.path("limit-mpi")],
                            extra_env={"FANFOLD_TEST_ONLY_FAULTS": "inject:stall:shard=7"})
        err = err.decode("utf-8", "replace")
        # Intent: a shard stuck on a node is killed at the limit and fails alone (exit 1, no hang).
        checks.check(rc == 1 and "per-shard time limit" in err, "stalled shard under mpirun with a 1 s limit: "
                     "exit %d: %s" % (rc, err[-800:]))

        # ---- node failure: SIGKILL an agent, then resume
        kjob = gen_path
        rc, want, err = local(env, ["run", kjob, "-o", "-", "-q", "-j", 2, "--run-dir", env.path("kill-ref")])
        checks.check(rc == 0, "reference run for the kill test: exit %d" % rc)
        for resume_with_mpi in (False, True):
            marker = "FANFOLD_E2E_MPI_MARK=" + uuid.uuid4().hex
            run_dir = env.path("killed-%d" % resume_with_mpi)
            extra = {"FANFOLD_TEST_ONLY_FAULTS": stall_faults(300, 25), marker.split("=")[0]: marker.split("=")[1]}
            p = mpirun(env, 3, ["run", kjob, "-o", "-", "-q", "-j", 1, "--run-dir", run_dir], extra_env=extra,
                       background=True)
            victim, deadline = 0, time.time() + 30
            while time.time() < deadline and not victim:
                time.sleep(0.1)
                # Kill once both agents have workers running.
                if sum(1 for _, c in processes_with(marker) if c == "fanfold-worker") >= 2:
                    time.sleep(1.0)
                    victim = agent_pid(marker, 2)
            if not checks.check(victim > 0, "found the agent of rank 2 to kill"):
                p.kill()
                p.wait()
                continue
            os.kill(victim, signal.SIGKILL)
            try:
                _, err = p.communicate(timeout=60)
            except subprocess.TimeoutExpired:
                p.kill()
                _, err = p.communicate()
                checks.fail("mpirun did not end within 60 s after an agent was killed")
            # Intent: a node failure ends the MPI job with a non-zero status (Open MPI has no fault tolerance).
            checks.check(p.returncode != 0, "mpirun exit after an agent was SIGKILLed: %d" % p.returncode)
            time.sleep(0.5)
            left = processes_with(marker)
            # Intent: no worker, agent or guardian of the killed run survives it.
            checks.check(not left, "processes of the killed MPI run still alive: %s" % left)
            # Intent: no shared-memory segment of a dead owner is left (the guardian removed the agent's).
            checks.check(not lib.leaked_segments(), "leaked segments: %s" % lib.leaked_segments())
            saved = glob.glob(os.path.join(run_dir, "partials", "*"))
            checks.check(saved, "the killed run committed partials before it ended: %s" % err[-600:])
            if resume_with_mpi:
                rc, got, err = mpirun(env, 2, ["resume", run_dir, "-o", "-", "-q", "-j", 2])
            else:
                rc, got, err = local(env, ["resume", run_dir, "-o", "-", "-q", "-j", 2])
            # Intent: resume after a node failure gives the bytes of an uninterrupted run.
            checks.check(rc == 0 and got == want, "resume %s mpirun after the kill: exit %d, %s: %s" %
                         ("with" if resume_with_mpi else "without", rc,
                          "same bytes" if got == want else "DIFFERENT bytes", err[-800:]))

        # ---- identity: files changed after the shard list was made
        idata = os.path.join(env.tmp, "ident")
        env.generate(idata, "--shards", 8, "--records", 30, "--seed", 99)
        ijob = json.loads(json.dumps(gen_job))
        ijob["inputs"]["files"] = [os.path.join(idata, "*.ndjson.zst")]
        ipath = lib.write_job(env.path("ident_job.json"), ijob)
        run_dir = env.path("ident-run")
        p = mpirun(env, 2, ["run", ipath, "-o", "-", "-q", "-j", 1, "--run-dir", run_dir],
                   extra_env={"FANFOLD_TEST_ONLY_FAULTS": stall_faults(8, 400)}, background=True)
        deadline = time.time() + 30
        while time.time() < deadline and not os.path.exists(os.path.join(run_dir, "run.json")):
            time.sleep(0.02)
        for f in glob.glob(os.path.join(idata, "*.ndjson.zst")):
            st = os.stat(f)
            os.utime(f, ns=(st.st_atime_ns, st.st_mtime_ns + 1_000_000_000))
        _, err = p.communicate(timeout=120)
        err = err.decode("utf-8", "replace")
        # Intent: a shard whose identity differs on the node fails (exit 1), the others are still done.
        checks.check(p.returncode != 0, "changed shard files: mpirun exit %d (want 1 from rank 0)" % p.returncode)
        checks.check("is not the file the coordinator listed" in err and "on node " in err
                     and "the coordinator saw" in err and idata in err,
                     "identity failure names path, node and both identities: %s" % err[-1200:])
    checks.exit()


if __name__ == "__main__":
    main()
