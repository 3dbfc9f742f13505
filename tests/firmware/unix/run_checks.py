# ruff: noqa: UP031 - %-formatting, which every MicroPython port has
# Runs tests/firmware/portable_checks.py under the MicroPython unix port.
# Usage: micropython tests/firmware/unix/run_checks.py REPO [CHECK ...]
# Prints one line per check and a closing "N passed, M failed" line; exits 1 on any failure.
import json
import sys

repo = sys.argv[1]
only = sys.argv[2:]
for p in (repo + "/tests/firmware", repo + "/firmware", repo + "/tests/firmware/fakes"):
    sys.path.insert(0, p)

import portable_checks  # noqa: E402

vectors = {}
for name in ("frames", "conversions", "run_log"):
    try:
        with open(repo + "/tests/vectors/" + name + ".json") as f:
            vectors[name] = json.load(f)
    except OSError:
        pass
with open(repo + "/tests/vectors/run_log.bin", "rb") as f:
    vectors["run_log_bin"] = f.read()

print("interpreter:", sys.implementation.name, sys.implementation.version)
passed = failed = 0
for check in portable_checks.CHECKS:
    name = check.__name__
    if only and name not in only:
        continue
    try:
        check(vectors)
        passed += 1
        print("PASS", name)
    except Exception as e:
        failed += 1
        print("FAIL", name)
        sys.print_exception(e)
print("%d passed, %d failed" % (passed, failed))
sys.exit(1 if failed or not passed else 0)
