/**
 * The training worker: computes a rule's change for one slice of a batch, on parameters held in
 * shared memory, and writes it, weighted by the slice's share of the batch, into the slice's own
 * shared change arrays.
 * @module
 */
import { buildNetwork, parameterBuffers, type Network } from "../../network/network.js";
import { createRule, ParameterDelta, type LearningRule } from "../../rules/index.js";
import type { Dtype, FloatArray } from "../../types/index.js";
import { typescriptBackend } from "../../kernels/wasm/backend.js";
import { selectBackend } from "../../kernels/wasm/loader.js";
import type { SharedArray, SliceTask } from "./protocol.js";

const view = (dtype: Dtype, a: SharedArray): FloatArray => (dtype === "float32" ? new Float32Array(a.buffer, a.byteOffset, a.length) : new Float64Array(a.buffer, a.byteOffset, a.length));

interface Session {
  readonly net: Network;
  /** With WebAssembly kernels: the network's own parameter arrays and the shared ones to copy from per batch. */
  readonly mirror: { own: FloatArray[]; shared: FloatArray[] } | null;
  readonly rule: LearningRule;
  readonly delta: ParameterDelta;
  /** This worker's views of each slice's change arrays, by slice index. */
  readonly slots: Map<number, FloatArray[]>;
}
const sessions = new Map<number, Session>();

function session(task: SliceTask): Session {
  let s = sessions.get(task.session);
  if (s === undefined) {
    let k = 0;
    let net: Network;
    let mirror: Session["mirror"] = null;
    const shared = task.parameters.map((a) => view(task.spec.dtype, a));
    const backend = task.kernels === "wasm" ? selectBackend("auto") : typescriptBackend;
    if (backend !== typescriptBackend) {
      net = buildNetwork(task.spec, { backend });
      mirror = { own: parameterBuffers(net), shared };
    } else net = buildNetwork(task.spec, { allocate: () => shared[k++] as FloatArray, keepValues: true });
    const rule = createRule(net, task.rule);
    const delta = new ParameterDelta(net);
    s = { net, mirror, rule, delta, slots: new Map() };
    sessions.set(task.session, s);
  }
  return s;
}

/** Runs one slice; returns the number of rows processed. */
export default function runSlice(task: SliceTask): number {
  const s = session(task);
  const { net } = s;
  // WebAssembly kernels compute in the worker's own memory: bring in the current parameters (once per batch)
  if (s.mirror !== null) s.mirror.own.forEach((a, i) => a.set(s.mirror!.shared[i] as FloatArray));
  const inputs = new Float64Array(task.inputs).subarray(task.start * task.inputSize, (task.start + task.count) * task.inputSize);
  const targets = new Float64Array(task.targets).subarray(task.start * task.targetSize, (task.start + task.count) * task.targetSize);
  s.rule.computeDelta({ inputs: { [task.inputName]: inputs }, targets: { [task.outputName]: targets } }, s.delta);
  // the slice's mean change, written raw; the main thread weights the slices by their share of the batch
  let slots = s.slots.get(task.slice);
  if (slots === undefined) {
    slots = task.deltas.map((a) => view(task.spec.dtype, a));
    s.slots.set(task.slice, slots);
  }
  const own: FloatArray[] = [...s.delta.biases];
  net.connections.forEach((c) => {
    own.push(s.delta.weights[c.index] as FloatArray);
    if (c.feedback.kind === "separate") own.push(s.delta.feedback[c.index] ?? new Float64Array(c.feedback.weights.length));
  });
  own.forEach((src, i) => {
    const dst = slots[i] as FloatArray;
    if (src.length === dst.length) dst.set(src);
    else dst.fill(0); // input layers' biases (no change)
  });
  return task.count;
}
