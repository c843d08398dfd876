/** Test helper: asserts that `fn` throws an EbbflowError with the given code and path. */
import { expect } from "vitest";
import { EbbflowError, type ErrorCode } from "../../src/errors/index.js";

export function expectEbbflowError(fn: () => unknown, code: ErrorCode, path: string): EbbflowError {
  let caught: unknown;
  try {
    fn();
  } catch (e) {
    caught = e;
  }
  expect(caught, `expected an EbbflowError ${code} at ${path}`).toBeInstanceOf(EbbflowError);
  const err = caught as EbbflowError;
  expect(err.code, err.message).toBe(code);
  expect(err.path, err.message).toBe(path);
  return err;
}
