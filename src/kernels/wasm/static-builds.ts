/**
 * Both WebAssembly builds, for the synchronous loaders: what `#kernel-builds`
 * (package.json "imports") resolves to everywhere but in browser bundles.
 * @module
 */
import { RELAXED_WASM_BASE64 } from "./generated/relaxed.js";
import { SIMD_WASM_BASE64 } from "./generated/simd.js";

/** Base64 bytes of the builds available without an import on demand. */
export const STATIC_BUILDS: Readonly<Partial<Record<"simd" | "relaxed", string>>> = { simd: SIMD_WASM_BASE64, relaxed: RELAXED_WASM_BASE64 };
