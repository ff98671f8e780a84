#!/usr/bin/env python3
"""Deterministic mutation run of the built binary over the four input kinds (remeasurement
CSV, model TOML, scenario TOML, tree list): N mutants per kind, each with a 20 s timeout.
Counts panics, aborts (killed by a signal), hangs, unexpected exit codes and partial outputs.

    cargo build --release && python3 benches/fuzz/mutate.py [N]
"""
import os, random, subprocess, sys, tempfile

BIN = os.path.join(os.path.dirname(__file__), "..", "..", "target", "release", "stemcast")
N = int(sys.argv[1]) if len(sys.argv) > 1 else 1000

CSV = ("stand,tree,dbh,alive,years,x\n1,1,10,1,5,0.1\n1,2,11,0,5,0.4\n1,3,12,1,5,0.9\n"
       "1,4,13,1,5,0.3\n2,5,10,0,5,0.2\n2,6,14,1,5,0.8\n2,7,15,0,5,0.7\n2,8,9,1,5,0.5\n")
SURV = ('kind = "survival"\nlink = "logit"\nperiod_years = 5\n[[coefficients]]\n'
        'term = "(intercept)"\nestimate = 2.0\nstd_error = 0.3\n[[coefficients]]\n'
        'term = "dbh"\nestimate = 0.01\nstd_error = 0.002\n[covariance]\n'
        'terms = ["(intercept)", "dbh"]\nmatrix = [[0.09, 0.0], [0.0, 0.000004]]\n')
GROW = ('kind = "growth"\nresponse = "annual_increment"\nperiod_years = 5\nresidual_sd = 0.1\n'
        '[[coefficients]]\nterm = "(intercept)"\nestimate = 0.3\n[[coefficients]]\n'
        'term = "dbh"\nestimate = 0.01\n')
SCEN = ('name = "t"\nhorizon_years = 20\nstep_years = 5\nreplicates = 20\nseed = 3\n'
        '[models]\nsurvival = "s.toml"\ngrowth = "g.toml"\n[uncertainty]\nprocess = true\n'
        'parameters = false\n[cohort]\nTREES\n')
TREES = "tree,dbh,expansion\n1,10,100\n2,12.5,100\n3,20,50\n4,31,25\n"
TOKENS = ["", "-1", "0", "nan", "inf", "1e308", "1e-300", "9223372036854775807", "\xff\xfe",
          '"', ",", "\n", "=", "[", "]", "x" * 70000, "1e12", "-0", " ", "true", "é"]


def mutate(text, rng):
    b = bytearray(text.encode("utf-8"))
    for _ in range(rng.randint(1, 3)):
        op = rng.randrange(5)
        i = rng.randrange(len(b) + 1)
        if op == 0 and b:
            del b[i:i + rng.randint(1, 8)]
        elif op == 1:
            b[i:i] = rng.choice(TOKENS).encode("utf-8", "surrogateescape")
        elif op == 2 and b:
            j = rng.randrange(len(b))
            b[min(i, j):max(i, j)] = b[min(i, j):max(i, j)] * 2  # duplicate a span
        elif op == 3 and b:
            # replace a number-ish run with a token
            j = min(len(b), i + rng.randint(1, 6))
            b[i:j] = rng.choice(TOKENS).encode()
        elif b:
            b[rng.randrange(len(b))] = rng.randrange(256)
    return bytes(b)


def run(kind, k, rng, counts):
    with tempfile.TemporaryDirectory() as d:
        files = {"data.csv": CSV, "s.toml": SURV, "g.toml": GROW, "t.csv": TREES,
                 "sc.toml": SCEN.replace("TREES", 'trees = "t.csv"')}
        target = {"csv": "data.csv", "model": rng.choice(["s.toml", "g.toml"]),
                  "scenario": "sc.toml", "trees": "t.csv"}[kind]
        for name, text in files.items():
            with open(os.path.join(d, name), "wb") as f:
                f.write(mutate(text, rng) if name == target else text.encode())
        if kind == "csv":
            args = ["fit", "survival", "data.csv", "-p", "x", "--out", "m.toml"]
            outputs = ["m.toml"]
        else:
            args = ["project", "sc.toml", "--out", "out"]
            outputs = ["out"]
        try:
            p = subprocess.run([BIN] + args, cwd=d, capture_output=True, timeout=20)
        except subprocess.TimeoutExpired:
            counts["hang"] += 1
            return
        err = p.stderr.decode("utf-8", "replace")
        if "panicked" in err:
            counts["panic"] += 1
            print(f"PANIC {kind} {k}: {err[:300]}")
        elif p.returncode < 0:
            counts["abort"] += 1
            print(f"ABORT {kind} {k}: signal {-p.returncode}")
        elif p.returncode not in (0, 1, 2):
            counts["other"] += 1
        if p.returncode != 0:
            left = [o for o in outputs if os.path.exists(os.path.join(d, o))]
            temps = [n for n in os.listdir(d) if n.startswith(".")]
            if left or temps:
                counts["partial"] += 1
                print(f"PARTIAL {kind} {k}: {left + temps}")
        else:
            counts["ok"] += 1
        if p.returncode == 2 and not err.startswith("stemcast: error: "):
            counts["unlocated"] += 1


def main():
    total = {}
    for kind in ["csv", "model", "scenario", "trees"]:
        rng = random.Random(f"stemcast-{kind}")
        counts = dict(ok=0, panic=0, abort=0, hang=0, other=0, partial=0, unlocated=0)
        for k in range(N):
            run(kind, k, rng, counts)
        total[kind] = counts
        print(kind, counts, flush=True)
    return 0 if all(c["panic"] + c["abort"] + c["hang"] + c["partial"] == 0
                    for c in total.values()) else 1


if __name__ == "__main__":
    sys.exit(main())
