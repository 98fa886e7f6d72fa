"""Shared by the Python check scripts that run zeeline as a program: a failure list, a check that records
without stopping, a run that checks the exit code, and the summary at the end."""
import subprocess
import sys

failures = []


def check(cond, what):
    if not cond:
        failures.append(what)
        print("FAIL:", what)


def run(cmd, expect_rc=0, env=None):
    p = subprocess.run(cmd, capture_output=True, text=True, env=env, timeout=600)
    check(p.returncode == expect_rc, f"{' '.join(cmd[:6])}...: exit {p.returncode}, expected {expect_rc}; "
                                     f"stderr={p.stderr.strip()[:600]}")
    return p


def finish(passed_message):
    if failures:
        print(f"{len(failures)} failure(s)")
        sys.exit(1)
    print(passed_message)
