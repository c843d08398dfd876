/** Assertions on ebbflow's typed errors. */
import { expect } from "vitest";
import { EbbflowError } from "../../src/errors/index.js";

/** Runs `f` and returns the EbbflowError it throws (fails the test when it throws nothing or something else). */
export function thrown(f: () => unknown): EbbflowError {
  try {
    f();
  } catch (e) {
    expect(e).toBeInstanceOf(EbbflowError);
    return e as EbbflowError;
  }
  return expect.fail("expected an EbbflowError");
}
