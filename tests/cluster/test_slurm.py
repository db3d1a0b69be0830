"""The cluster path on a real scheduler: a one-node Slurm cluster is started on this machine
(munged, slurmctld and slurmd with a minimal slurm.conf in a temporary folder), the job array
of docs/studies.md is submitted as the page writes it (its sizes scaled down: 4 shards of 2 000
trials, one CPU each), the shards are merged, and the merged study.csv must be the unsharded
run's, byte for byte. Everything started is stopped afterwards. Skipped (exit 77, saying which
Debian packages) where Slurm or munge is missing or when not run as root.
usage: test_slurm.py STAGESIM REPO_ROOT"""
import os
import re
import shutil
import signal
import socket
import subprocess
import sys
import tempfile
import time

stagesim, root = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2])
need = ["munged", "slurmctld", "slurmd", "sbatch", "squeue", "sinfo"]
missing = [t for t in need if not shutil.which(t) and not os.path.exists("/usr/sbin/" + t)]
if missing:
    print("skipped: %s not installed: Debian packages slurm-wlm and munge "
          "(bash tests/install_deps.sh --with-slurm)" % ", ".join(missing))
    sys.exit(77)
if os.geteuid() != 0:
    print("skipped: a one-node Slurm cluster is started as root here")
    sys.exit(77)
fails = 0


def check(what, ok, detail=""):
    global fails
    print(("ok: " if ok else "FAIL: ") + what + ("" if ok else " -- " + detail))
    fails += 0 if ok else 1


def free_port():
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def sbin(name):
    return shutil.which(name) or "/usr/sbin/" + name


tmp = tempfile.mkdtemp(prefix="ss_slurm_")
os.chmod(tmp, 0o755)
procs = []
host = socket.gethostname().split(".")[0]
try:
    # munge: its own key, socket and files
    key = os.path.join(tmp, "munge.key")
    with open(key, "wb") as f:
        f.write(os.urandom(1024))
    os.chmod(key, 0o400)
    sock = os.path.join(tmp, "munge.socket")
    subprocess.run([sbin("munged"), "--force", "--key-file=" + key, "--socket=" + sock,
                    "--pid-file=" + os.path.join(tmp, "munged.pid"),
                    "--log-file=" + os.path.join(tmp, "munged.log"),
                    "--seed-file=" + os.path.join(tmp, "munged.seed")], check=True,
                   timeout=30)
    for d in ("state", "spool"):
        os.makedirs(os.path.join(tmp, d))
    ctld_port, d_port = free_port(), free_port()
    conf = os.path.join(tmp, "slurm.conf")
    with open(conf, "w") as f:
        f.write(f"""ClusterName=stagesimtest
SlurmctldHost={host}
SlurmUser=root
SlurmdUser=root
SlurmctldPort={ctld_port}
SlurmdPort={d_port}
AuthType=auth/munge
AuthInfo=socket={sock}
CredType=cred/munge
StateSaveLocation={tmp}/state
SlurmdSpoolDir={tmp}/spool
SlurmctldPidFile={tmp}/slurmctld.pid
SlurmdPidFile={tmp}/slurmd.pid
SlurmctldLogFile={tmp}/slurmctld.log
SlurmdLogFile={tmp}/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SelectType=select/cons_tres
SelectTypeParameters=CR_CPU
SchedulerType=sched/builtin
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
MpiDefault=none
ReturnToService=2
NodeName={host} CPUs={os.cpu_count() or 1} State=UNKNOWN
PartitionName=test Nodes={host} Default=YES MaxTime=INFINITE State=UP
""")
    env = dict(os.environ, SLURM_CONF=conf)
    for daemon in ("slurmctld", "slurmd"):
        procs.append(subprocess.Popen([sbin(daemon), "-D", "-f", conf], env=env,
                                      stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL))
    up = False
    for _ in range(60):
        r = subprocess.run(["sinfo", "-h", "-o", "%T"], env=env, capture_output=True, text=True)
        if r.returncode == 0 and "idle" in r.stdout:
            up = True
            break
        time.sleep(0.5)
    check("a one-node Slurm cluster is up", up, r.stdout + r.stderr)
    if up:
        # the page's job array, scaled down
        doc = open(os.path.join(root, "docs", "studies.md"), encoding="utf-8").read()
        m = re.search(r"\n    #!/bin/bash\n((?:    .*\n)+)", doc)
        script = "#!/bin/bash\n" + "".join(l[4:] + "\n" for l in m.group(1).splitlines())
        script = (script.replace("--array=1-32", "--array=1-4")
                  .replace("--cpus-per-task=4", "--cpus-per-task=1")
                  .replace("--trials 1000000", "--trials 2000")
                  .replace("/32\"", "/4\"")
                  .replace("stagesim spread", stagesim + " spread"))
        check("the job script is the page's (one shard per task, its own folder)",
              "$SLURM_ARRAY_TASK_ID/4" in script and "--array=1-4" in script, script)
        work = os.path.join(tmp, "work")
        shutil.copytree(os.path.join(root, "netlists"), os.path.join(work, "netlists"))
        shutil.copytree(os.path.join(root, "models"), os.path.join(work, "models"))
        job = os.path.join(work, "spread.sbatch")
        with open(job, "w") as f:
            f.write(script)
        r = subprocess.run(["sbatch", "--parsable", "-D", work, "-o",
                            os.path.join(tmp, "task-%a.log"), job], env=env,
                           capture_output=True, text=True, timeout=60)
        check("sbatch takes the job array", r.returncode == 0, r.stderr)
        done = False
        for _ in range(480):
            q = subprocess.run(["squeue", "-h"], env=env, capture_output=True, text=True)
            if q.returncode == 0 and not q.stdout.strip():
                done = True
                break
            time.sleep(0.5)
        check("the array finished within 4 minutes", done, q.stdout)
        shards = [os.path.join(work, "out", "shard%d" % k, "study.csv") for k in range(1, 5)]
        check("every task wrote its shard", all(os.path.exists(s) for s in shards),
              str([os.path.exists(s) for s in shards]))
        lim = os.path.join(work, "netlists", "vibration_frontend.limits")
        mg = subprocess.run([stagesim, "merge", "-o", os.path.join(work, "out", "all"),
                             "--limits", lim, "-q"] + shards, capture_output=True, text=True)
        check("merge takes the four shards", mg.returncode == 0, mg.stderr)
        whole = os.path.join(work, "whole")
        un = subprocess.run([stagesim, "spread", "netlists/vibration_frontend.cir", "--tol",
                             "R1=5%", "--tol", "R2=5%", "--tol", "ss_npn.bf=100..300",
                             "--limits", "netlists/vibration_frontend.limits", "--trials",
                             "2000", "--seed", "7", "-o", whole, "-q"], cwd=work,
                            capture_output=True, text=True)
        check("the unsharded run", un.returncode == 0, un.stderr)
        a = os.path.join(work, "out", "all", "study.csv")
        b = os.path.join(whole, "study.csv")
        same = os.path.exists(a) and os.path.exists(b) and open(a, "rb").read() == open(b, "rb").read()
        check("the merged Slurm shards are the unsharded study.csv, byte for byte", same)
finally:
    for p in procs:
        p.send_signal(signal.SIGTERM)
    for p in procs:
        try:
            p.wait(timeout=20)
        except subprocess.TimeoutExpired:
            p.kill()
    pid = os.path.join(tmp, "munged.pid")
    if os.path.exists(pid):
        try:
            os.kill(int(open(pid).read().strip()), signal.SIGTERM)
        except (ValueError, ProcessLookupError):
            pass
    if fails:
        for log in ("slurmctld.log", "slurmd.log", "task-1.log"):
            p = os.path.join(tmp, log)
            if os.path.exists(p):
                print("---- " + log)
                print(open(p, errors="replace").read()[-1500:])
    shutil.rmtree(tmp, ignore_errors=True)
print("%d failed" % fails)
sys.exit(1 if fails else 0)
