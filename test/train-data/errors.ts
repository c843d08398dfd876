/** Test helpers: assert that a call throws (or a promise rejects with) an EbbflowError of a given code and path. */
import { expect } from "vitest";
import { EbbflowError, type ErrorCode } from "../../src/errors/index.js";

function checkError(caught: unknown, code: ErrorCode, path: string): EbbflowError {
  expect(caught, `expected an EbbflowError ${code} at ${path}`).toBeInstanceOf(EbbflowError);
  const err = caught as EbbflowError;
  expect(err.code, err.message).toBe(code);
  expect(err.path, err.message).toBe(path);
  return err;
}

/** Asserts that `fn` throws an EbbflowError whose first issue has `code` and `path`. */
export function expectError(fn: () => unknown, code: ErrorCode, path: string): EbbflowError {
  let caught: unknown;
  try {
    fn();
  } catch (e) {
    caught = e;
  }
  return checkError(caught, code, path);
}

/** Asserts that `promise` rejects with an EbbflowError whose first issue has `code` and `path`. */
export async function expectRejection(promise: Promise<unknown>, code: ErrorCode, path: string): Promise<EbbflowError> {
  let caught: unknown;
  try {
    await promise;
  } catch (e) {
    caught = e;
  }
  return checkError(caught, code, path);
}
