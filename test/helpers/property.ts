/** fast-check settings shared by the property tests: seeds are printed on failure. */
import fc from "fast-check";

/** Runs a property; on failure fast-check's report (with seed and path) is thrown, so the seed is printed. */
export function check<Ts>(property: fc.IProperty<Ts> | fc.IAsyncProperty<Ts>, runs = 100): void | Promise<void> {
  const seed = process.env.EBBFLOW_FC_SEED !== undefined ? Number(process.env.EBBFLOW_FC_SEED) : Date.now() ^ (Math.random() * 0x7fffffff);
  return fc.assert(property as fc.IProperty<Ts>, { numRuns: runs, seed, verbose: 1 });
}
