// Entry of the WebAssembly kernels: every export takes byte offsets into the
// imported memory `env.memory` and element counts, and most exist once per
// storage type (F32: f32x4 lanes, F64: f64x2 lanes). The exports are declared
// in assembly/layout.mjs (their wrappers are generated into
// assembly/generated/exports.ts by scripts/build-wasm.mjs). The JavaScript
// side (src/kernels/wasm/) owns the memory layout; this module has no data
// segment, no allocator and no imports besides the memory.

export * from "./generated/exports";
