import { it } from "vitest";
import { writeFileSync } from "node:fs";
import { readResults, learningCurveSvg, bandCurveSvg, weightMatrixSvg, receptiveFieldsSvg } from "../../src/node/plot.js";
const mk = (seed: number, f: (e: number) => number, n = 5) => readResults(
  [JSON.stringify({ kind: "header", ebbflow: "0.1.0", seed, config: {}, started: "2025-01-31T12:00:00Z" }),
   ...Array.from({ length: n }, (_, i) => JSON.stringify({ kind: "epoch", epoch: i + 1, seconds: 0.1, rate: 0.05, train: { sse: f(i + 1) }, test: { sse: f(i + 1) * 1.2 } }))].join("\n"), `s${seed}`);
it("scratch", async () => {
  const a = mk(1, (e) => 2 / e), b = mk(2, (e) => 3 / e, 4);
  let t = performance.now();
  writeFileSync("/tmp/lc.svg", await learningCurveSvg([{ label: "a", results: a }, { label: "b", results: b }], { metric: "sse", split: "both", title: "T <&>" }));
  console.log(performance.now() - t); t = performance.now();
  writeFileSync("/tmp/band.svg", await bandCurveSvg([{ label: "g1", runs: [a, b] }, { label: "g2", runs: [mk(3, (e) => 1 / e)] }], { metric: "sse", split: "train", logY: true }));
  console.log(performance.now() - t); t = performance.now();
  writeFileSync("/tmp/wm.svg", await weightMatrixSvg(new Float64Array([1, -1, 0, 0.5, -0.5, 0.25]), 2, 3, { title: "W" }));
  console.log(performance.now() - t); t = performance.now();
  const w = new Float32Array(3 * 12).map((_, i) => Math.sin(i));
  writeFileSync("/tmp/rf.svg", await receptiveFieldsSvg(w, 3, 12, 4, 3, { title: "RF" }));
  console.log(performance.now() - t);
});
