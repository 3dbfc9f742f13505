// Runs tests/firmware/portable_checks.py under the real MicroPython interpreter (WebAssembly port).
// Usage: node tests/firmware/mp/run.mjs   (after: npm ci --prefix tests/firmware/mp)
// Prints one line per check and a closing "N passed, M failed" line; exits 1 on any failure.
import { readFileSync, readdirSync } from "node:fs";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";
import { loadMicroPython } from "@micropython/micropython-webassembly-pyscript";

const here = dirname(fileURLToPath(import.meta.url));
const repo = join(here, "..", "..", "..");
const out = [];
const mp = await loadMicroPython({
  stdout: (line) => { out.push(line); console.log(line); },
  stderr: (line) => console.error(line),
  linebuffer: true,
  heapsize: 16 * 1024 * 1024,
});

function copyDir(src, dst) {
  mp.FS.mkdirTree(dst);
  for (const name of readdirSync(src)) {
    if (name.endsWith(".py")) mp.FS.writeFile(join(dst, name), readFileSync(join(src, name)));
  }
}
copyDir(join(repo, "firmware", "heatlog_fw"), "/lib/heatlog_fw");
copyDir(join(repo, "tests", "firmware", "fakes"), "/lib");
mp.FS.writeFile("/lib/portable_checks.py", readFileSync(join(repo, "tests", "firmware", "portable_checks.py")));
mp.FS.mkdirTree("/vectors");
for (const name of readdirSync(join(repo, "tests", "vectors"))) {
  if (name.endsWith(".json") || name.endsWith(".bin")) {
    mp.FS.writeFile("/vectors/" + name, readFileSync(join(repo, "tests", "vectors", name)));
  }
}

const only = process.argv.slice(2);
mp.runPython(`
import sys, json
sys.path.insert(0, "/lib")
import portable_checks
vectors = {}
for name in ("frames", "conversions", "run_log"):
    try:
        with open("/vectors/" + name + ".json") as f:
            vectors[name] = json.load(f)
    except OSError:
        pass
with open("/vectors/run_log.bin", "rb") as f:
    vectors["run_log_bin"] = f.read()
only = ${JSON.stringify(only)}
passed = failed = 0
print("interpreter:", sys.implementation.name, sys.implementation.version)
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
`);
const last = out[out.length - 1] || "";
const m = /^(\d+) passed, (\d+) failed$/.exec(last);
process.exit(m && m[2] === "0" && m[1] !== "0" ? 0 : 1);
