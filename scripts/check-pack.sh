#!/usr/bin/env bash
# Checks the package as a user gets it: `npm pack`, then, for each Node binary given (default: `node` on
# PATH), in a new empty project:
#   1. `npm install --engine-strict` of the tarball (fails on any engine warning), and the install size
#      (must match what README.md states, within 10%: packages and megabytes);
#   2. every command of README.md's "Demo" and "From the command line" sections, as printed (the install
#      line of "Install" is the tarball install above), and the README's embedding example importing
#      "ebbflow" by name;
#   3. `require("ebbflow")` gives the ESM-only message; the schemas and data resolve through "exports";
#   4. strict TypeScript consumers (skipLibCheck: false) compile: one of the core alone as a browser project
#      would (the DOM library, no Node types), one of ebbflow/node with Node's types.
# Prints the tarball's size and contents summary. Needs `npm run build` first (dist/).
# Usage: bash scripts/check-pack.sh [NODE_BIN ...]
set -euo pipefail
root=$(cd "$(dirname "$0")/.." && pwd)
nodes=("$@")
[ ${#nodes[@]} -eq 0 ] && nodes=("$(command -v node)")
work=$(mktemp -d "${TMPDIR:-/tmp}/ebbflow-pack.XXXXXX")
trap 'rm -rf "$work"' EXIT
tsc="$root/node_modules/typescript/bin/tsc"
fail() { echo "check-pack: FAILED: $*" >&2; exit 1; }

cd "$root"
[ -f dist/index.js ] || fail "dist/ is missing: run npm run build first"
npm pack --silent --pack-destination "$work" --json >"$work/pack.json"
tarball="$work/$(node -e 'console.log(JSON.parse(require("fs").readFileSync(process.argv[1], "utf8"))[0].filename)' "$work/pack.json")"
node -e '
const p = JSON.parse(require("fs").readFileSync(process.argv[1], "utf8"))[0];
const by = {};
for (const f of p.files) { const top = f.path.includes("/") ? f.path.split("/")[0] + "/" : f.path; by[top] = (by[top] ?? 0) + f.size; }
console.log(`check-pack: ${p.filename}: ${p.entryCount} files, ${(p.size / 1024).toFixed(0)} kB packed, ${(p.unpackedSize / 1024).toFixed(0)} kB unpacked`);
console.log("check-pack: unpacked by top-level entry: " + Object.entries(by).sort((a, b) => b[1] - a[1]).map(([k, v]) => `${k} ${(v / 1024).toFixed(0)} kB`).join(", "));
const maps = p.files.filter((f) => f.path.endsWith(".map"));
if (maps.length > 0) { console.error(`check-pack: ${maps.length} source maps shipped`); process.exit(1); }
for (const need of ["LICENSE", "README.md", "data/iris.csv", "data/README.md", "docs/guide/cli.md", "examples/iris.json", "examples/plugins/own-rules.js", "examples/embedding.ts", "schema/network.schema.json", "require.cjs", "dist/index.js", "dist/index.d.ts", "dist/node/index.js"]) {
  if (!p.files.some((f) => f.path === need)) { console.error(`check-pack: ${need} is not in the package`); process.exit(1); }
}' "$work/pack.json" || fail "package contents"

# the README's stated install size: "... adds N packages, X MB ..."
stated=$(node -e '
const m = /adds (\d+) packages? \(([\d.]+) MB/.exec(require("fs").readFileSync("README.md", "utf8"));
console.log(m ? `${m[1]} ${m[2]}` : "");')
[ -n "$stated" ] || fail "README.md does not state the install size as 'adds N packages (X MB'"

# the commands of README's Demo and From-the-command-line sections, in order
node -e '
const text = require("fs").readFileSync("README.md", "utf8");
const out = [];
for (const section of ["## Demo", "## From the command line"]) {
  const start = text.indexOf(section);
  if (start < 0) { console.error(`no section ${section}`); process.exit(1); }
  const block = /```sh\n([\s\S]*?)```/.exec(text.slice(start));
  for (const line of block[1].split("\n")) if (line.trim() !== "") out.push(line);
}
require("fs").writeFileSync(process.argv[1], "set -euo pipefail\n" + out.map((l) => `echo "+ ${l.replace(/["$`\\]/g, "\\$&")}"\n${l}\n`).join(""));
' "$work/readme-commands.sh"
# the README's embedding example, importing the package by name
node -e '
const text = require("fs").readFileSync("README.md", "utf8");
require("fs").writeFileSync(process.argv[1], /## Embedding[\s\S]*?```ts\n([\s\S]*?)```/.exec(text)[1]);
' "$work/embedding.mjs"

for node_bin in "${nodes[@]}"; do
  version=$("$node_bin" --version)
  echo "check-pack: === Node $version ($node_bin) ==="
  project="$work/project-$version"
  mkdir -p "$project"
  (
    cd "$project"
    export PATH="$(dirname "$node_bin"):$PATH" # npm, npx and the ebbflow command run on this Node
    [ "$(node --version)" = "$version" ] || fail "node on PATH is $(node --version), not $version"
    npm init -y >/dev/null
    if ! npm install --engine-strict --no-audit --no-fund "$tarball" >install.log 2>&1; then cat install.log; fail "npm install --engine-strict on Node $version"; fi
    if grep -Ei "EBADENGINE|npm warn" install.log; then fail "warnings while installing on Node $version"; fi
    packages=$(($(npm ls --all --parseable 2>/dev/null | wc -l) - 1))
    kb=$(du -sk node_modules | cut -f1)
    mb=$(node -e "console.log((${kb} / 1024).toFixed(1))")
    echo "check-pack: npm install ebbflow on Node $version: $packages packages, $mb MB in node_modules (README states ${stated% *} packages, ${stated#* } MB)"
    node -e '
const [n, mb, sn, smb] = process.argv.slice(1).map(Number);
if (Math.abs(n - sn) > Math.max(1, 0.1 * sn) || Math.abs(mb - smb) > 0.1 * smb) { console.error("the README'\''s install size is out of date"); process.exit(1); }' "$packages" "$mb" ${stated} || fail "install size"

    # 3. entry points of the installed package
    node -e 'try { require("ebbflow"); process.exit(1); } catch (e) { if (e.code !== "ERR_REQUIRE_ESM" || !/await import\("ebbflow"\)/.test(e.message)) { console.error(e); process.exit(1); } }' || fail "require(\"ebbflow\") message"
    node --input-type=module -e '
import { createRequire } from "node:module";
const require = createRequire(import.meta.url);
const core = await import("ebbflow"); const n = await import("ebbflow/node");
if (typeof core.buildNetwork !== "function" || typeof n.irisDataset !== "function") process.exit(1);
require.resolve("ebbflow/schema/network.schema.json"); require.resolve("ebbflow/schema/sweep.schema.json"); require.resolve("ebbflow/data/iris.csv");
if (require("ebbflow/package.json").name !== "ebbflow") process.exit(1);
if ((await n.irisDataset()).size !== 150) process.exit(1);
// relaxed SIMD is on by default from Node 22 (V8 12): the relaxed build must be the one chosen there
const want = Number(process.versions.node.split(".")[0]) >= 22 ? "wasm-relaxed-simd" : "wasm-simd";
const got = [core.selectBackend("auto").name, (await core.selectBackendAsync("auto")).name];
if (got.some((g) => g !== want)) { console.error(`kernels ${got} on Node ${process.version}, expected ${want}`); process.exit(1); }' || fail "imports, exports and kernels of the installed package"
    cp "$work/embedding.mjs" embedding.mjs
    node embedding.mjs >embedding.out || fail "README embedding example"

    # 4. strict TypeScript consumers, skipLibCheck: false
    mkdir -p ts-core ts-node
    # a browser project: the DOM library, no Node types
    cat >ts-core/tsconfig.json <<'JSON'
{ "compilerOptions": { "target": "ES2022", "lib": ["ES2022", "DOM"], "module": "NodeNext", "moduleResolution": "NodeNext", "strict": true,
  "exactOptionalPropertyTypes": true, "noUncheckedIndexedAccess": true, "skipLibCheck": false, "types": [], "noEmit": true }, "files": ["main.ts"] }
JSON
    cat >ts-core/main.ts <<'TS'
import { buildNetwork, createRule, EbbflowError, modelToNpz, Settler, weightView, type NdView } from "ebbflow";
const net = buildNetwork({ seed: 1, layers: [{ name: "a", size: 2, role: "input" }, { name: "b", size: 1, role: "output" }], connections: [{ from: "a", to: "b" }] });
const free = new Settler(net, 1).settle({ phase: "free", inputs: { a: [1, 0] } });
const w: NdView = weightView(net, "a->b");
createRule(net, { rule: "chl", rate: 0.1 }).step({ inputs: { a: [1, 0] }, targets: { b: [1] } });
const bytes: Uint8Array = modelToNpz(net);
const e: EbbflowError | undefined = undefined;
export const summary = [free.converged, w.shape, bytes.length, e];
TS
    cat >ts-node/tsconfig.json <<JSON
{ "compilerOptions": { "target": "ES2022", "lib": ["ES2022"], "module": "NodeNext", "moduleResolution": "NodeNext", "strict": true,
  "exactOptionalPropertyTypes": true, "noUncheckedIndexedAccess": true, "skipLibCheck": false, "types": ["node"],
  "typeRoots": ["$root/node_modules/@types"], "noEmit": true }, "files": ["main.ts"] }
JSON
    cat >ts-node/main.ts <<'TS'
import { buildNetwork } from "ebbflow";
import { exportModel, irisDataset, loadModel, renderSvg, type ChartSpec } from "ebbflow/node";
const spec: ChartSpec = { mark: "point" };
export async function main(): Promise<void> {
  const iris = await irisDataset();
  const net = buildNetwork({ seed: 1, layers: [{ name: "m", size: iris.inputSize, role: "input" }, { name: "s", size: iris.targetSize, role: "output" }], connections: [{ from: "m", to: "s" }] });
  await exportModel(net, { format: "npy", out: "out" });
  void loadModel;
  void renderSvg(spec);
}
TS
    # a package.json marking the consumers as ES modules (NodeNext reads it)
    echo '{ "type": "module" }' >ts-core/package.json
    echo '{ "type": "module" }' >ts-node/package.json
    ln -s ../node_modules ts-core/node_modules
    ln -s ../node_modules ts-node/node_modules
    node "$tsc" -p ts-core/tsconfig.json || fail "strict TypeScript consumer of the core (skipLibCheck: false)"
    node "$tsc" -p ts-node/tsconfig.json || fail "strict TypeScript consumer of ebbflow/node (skipLibCheck: false)"

    # 2. README commands as printed
    bash "$work/readme-commands.sh" >readme.log 2>&1 || { tail -40 readme.log; fail "a README command on Node $version"; }
    # the demo ran before the plotting packages were installed: it says so and how to install them
    grep -q "Learning curves not drawn: .*npm install vega@" readme.log || { tail -20 readme.log; fail "the demo's note on the plotting packages"; }
    ls runs/iris/accuracy.svg runs/iris/model.npz >/dev/null || fail "the plot and the export of the README commands"
    echo "check-pack: Node $version: install, entry points, TypeScript consumers and $(grep -c '^+ ' readme.log) README commands passed"
  ) || exit 1
done
echo "check-pack: passed"
