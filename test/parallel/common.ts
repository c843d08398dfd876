/** Helpers shared by the multi-core tests: kernels under test, parameters as numbers, agreement within float32 rounding. */
import { expect } from "vitest";
import { buildNetwork, EbbflowError, loadWasmKernelsSync, wasmSimdSupported, type Network, type NetworkSpecInput, type ParameterDelta } from "../../src/index.js";
import { EPS32 } from "../helpers/tolerance.js";

/** The TypeScript kernels, and the WebAssembly ones where SIMD is supported. */
export const kernelsUnderTest: readonly ("typescript" | "wasm")[] = wasmSimdSupported() ? ["typescript", "wasm"] : ["typescript"];

export function build(spec: NetworkSpecInput, kernels: "typescript" | "wasm"): Network {
  return buildNetwork(spec, kernels === "wasm" ? { backend: loadWasmKernelsSync({ relaxed: false }) } : {});
}

/** Every parameter of a network, in order, as plain numbers. */
export function parameters(net: Network): number[] {
  return [...net.layers.flatMap((l) => Array.from(l.bias)), ...net.connections.flatMap((c) => Array.from(c.weights))];
}

/** |a − b| ≤ 64·ε32·(1 + scale) entry by entry: a few float32 roundings of the largest value involved. */
export function expectAgree(actual: readonly number[], expected: readonly number[], scale: number, label: string): void {
  expect(actual.length).toBe(expected.length);
  const tol = 64 * EPS32 * (1 + scale);
  actual.forEach((v, i) => {
    if (!(Math.abs(v - expected[i]!) <= tol)) expect.fail(`${label}[${i}]: ${v} vs ${expected[i]} (tolerance ${tol})`);
  });
}

export function deltaValues(d: ParameterDelta): number[] {
  return [...d.biases.flatMap((b) => Array.from(b)), ...d.weights.flatMap((w) => Array.from(w))];
}

/** The code and path of the EbbflowError a promise rejects with (fails the test if it resolves or throws something else). */
export function refusal(p: Promise<unknown>): Promise<unknown[]> {
  return p.then(
    () => expect.fail("expected an EbbflowError"),
    (e: unknown) => {
      expect(e).toBeInstanceOf(EbbflowError);
      return [(e as EbbflowError).code, (e as EbbflowError).path];
    },
  );
}
