// The one declaration of the WebAssembly kernels' interface, read by scripts/build-wasm.mjs, which
// writes from it:
//   assembly/generated/layout.ts         (AssemblyScript: the exports, the unit kernel codes, the
//                                         constant-table slots and the function that writes the table)
//   src/kernels/wasm/generated/layout.ts (TypeScript: the exports' signatures, the unit kernel codes)
//   src/kernels/wasm/generated/kernels.ts (TypeScript: one wrapper per kernel of the WebAssembly backend,
//                                         all from one template in the build script)
// Both generated folders are git-ignored and rewritten by every build. Nothing here is arithmetic: the
// kernels themselves are assembly/*.ts.

/**
 * Unit kinds the SIMD unit kernels evaluate, in code order: kind i has code 2 i (the rate) and
 * 2 i + 1 (the slope). The exp-based kinds come first (assembly/units.ts puts NaN back for codes
 * up to tanh's slope). The built-in unit descriptors name these kinds (`kernel`).
 */
export const unitKernels = [
  { kind: "logistic", name: "LOGISTIC", doc: "1 / (1 + exp(-gain (x - offset))): the one kernel that reads gain and offset" },
  { kind: "tanh", name: "TANH", doc: "tanh(x)" },
  { kind: "relu", name: "RELU", doc: "max(0, x)" },
  { kind: "hard-sigmoid", name: "HARD_SIGMOID", doc: "min(1, max(0, x))" },
  { kind: "linear", name: "LINEAR", doc: "x" },
];

/**
 * The table of vector constants (16 bytes a slot, at a fixed address; see assembly/units.ts for
 * why): slot i holds `value` splatted into `lanes`. `value` is AssemblyScript source. The kernels
 * read slot `name` as K(name).
 */
export const constants = [
  { name: "F64_KMIN", lanes: "f64x2", value: "-1022.0", doc: "smallest exponent of a normal f64: 2^k is split as 2^max(k, -1022) 2^(k - max(k, -1022))" },
  { name: "F64_MAGIC_BIAS", lanes: "f64x2", value: "6755399441055744.0 + 1023.0", doc: "1.5 * 2^52 + 1023: adding it puts the biased exponent of k in the low mantissa bits" },
  { name: "F64_EXP_LO", lanes: "f64x2", value: "-746.0", doc: "exp(-746) rounds to 0 in f64; below that the argument is clamped" },
  { name: "F64_LOG2E", lanes: "f64x2", value: "1.4426950408889634", doc: "log2(e)" },
  { name: "F64_MAGIC", lanes: "f64x2", value: "6755399441055744.0", doc: "1.5 * 2^52: adding it rounds |t| < 2^51 to an integer held in the low mantissa bits" },
  { name: "F64_LN2_HI", lanes: "f64x2", value: "6.93147180369123816490e-1", doc: "ln 2, high part (fdlibm e_exp.c, Sun Microsystems 1993: ln2HI)" },
  { name: "F64_LN2_LO", lanes: "f64x2", value: "1.90821492927058770002e-10", doc: "ln 2, low part (fdlibm e_exp.c: ln2LO)" },
  { name: "F64_ONE", lanes: "f64x2", value: "1.0", doc: "1" },
  { name: "F64_INV_FACT_13", lanes: "f64x2", value: "1.6059043836821613e-10", doc: "1/13!" },
  { name: "F64_INV_FACT_12", lanes: "f64x2", value: "2.08767569878681e-9", doc: "1/12!" },
  { name: "F64_INV_FACT_11", lanes: "f64x2", value: "2.505210838544172e-8", doc: "1/11!" },
  { name: "F64_INV_FACT_10", lanes: "f64x2", value: "2.755731922398589e-7", doc: "1/10!" },
  { name: "F64_INV_FACT_9", lanes: "f64x2", value: "2.7557319223985893e-6", doc: "1/9!" },
  { name: "F64_INV_FACT_8", lanes: "f64x2", value: "2.48015873015873e-5", doc: "1/8!" },
  { name: "F64_INV_FACT_7", lanes: "f64x2", value: "1.984126984126984e-4", doc: "1/7!" },
  { name: "F64_INV_FACT_6", lanes: "f64x2", value: "1.388888888888889e-3", doc: "1/6!" },
  { name: "F64_INV_FACT_5", lanes: "f64x2", value: "8.333333333333333e-3", doc: "1/5!" },
  { name: "F64_INV_FACT_4", lanes: "f64x2", value: "4.1666666666666664e-2", doc: "1/4!" },
  { name: "F64_INV_FACT_3", lanes: "f64x2", value: "1.6666666666666666e-1", doc: "1/3!" },
  { name: "F64_HALF", lanes: "f64x2", value: "0.5", doc: "1/2!" },
  { name: "F64_TANH_LO", lanes: "f64x2", value: "-60.0", doc: "tanh(30) rounds to 1 in f64 (1 - tanh 30 < 2^-86): -2|x| is clamped here" },
  { name: "F64_ZERO", lanes: "f64x2", value: "0.0", doc: "0" },
  { name: "F64_NAN", lanes: "f64x2", value: "NaN", doc: "NaN" },
  { name: "F64_TWO", lanes: "f64x2", value: "2.0", doc: "2" },
  { name: "F64_NEG_ZERO", lanes: "f64x2", value: "-0.0", doc: "-0: the sign bit alone" },
  { name: "F64_FOUR", lanes: "f64x2", value: "4.0", doc: "4" },
  { name: "F32_EXP_P0", lanes: "f32x4", value: "1.9875691500e-4", doc: "Cephes expf polynomial (Cephes Math Library, S. L. Moshier 1984-1992, expf.c), coefficient 0" },
  { name: "F32_EXP_P1", lanes: "f32x4", value: "1.3981999507e-3", doc: "Cephes expf coefficient 1" },
  { name: "F32_EXP_P2", lanes: "f32x4", value: "8.3334519073e-3", doc: "Cephes expf coefficient 2" },
  { name: "F32_EXP_P3", lanes: "f32x4", value: "4.1665795894e-2", doc: "Cephes expf coefficient 3" },
  { name: "F32_EXP_P4", lanes: "f32x4", value: "1.6666665459e-1", doc: "Cephes expf coefficient 4" },
  { name: "F32_EXP_P5", lanes: "f32x4", value: "5.0000001201e-1", doc: "Cephes expf coefficient 5" },
  { name: "I32_F32_BIAS", lanes: "i32x4", value: "127", doc: "exponent bias of f32" },
  { name: "F32_EXP_LO", lanes: "f32x4", value: "-104.0", doc: "exp(-104) rounds to 0 in f32" },
  { name: "F32_LOG2E", lanes: "f32x4", value: "1.44269504088896341", doc: "log2(e) (Cephes expf)" },
  { name: "F32_MAGIC", lanes: "f32x4", value: "12582912.0", doc: "1.5 * 2^23 for f32 lanes" },
  { name: "F32_LN2_HI", lanes: "f32x4", value: "0.693359375", doc: "ln 2, high part (Cephes expf C1)" },
  { name: "F32_LN2_LO", lanes: "f32x4", value: "-2.12194440e-4", doc: "ln 2, low part (Cephes expf C2)" },
  { name: "F32_ONE", lanes: "f32x4", value: "1.0", doc: "1" },
  { name: "I32_F32_MAGIC_BITS", lanes: "i32x4", value: "0x4b400000", doc: "the bits of 1.5 * 2^23 (f32)" },
  { name: "F64_F32_EXP_LO", lanes: "f64x2", value: "-104.0", doc: "F32_EXP_LO in f64 lanes (the f32 logistic reduces its argument in f64)" },
  { name: "F64_LN2", lanes: "f64x2", value: "0.6931471805599453", doc: "ln 2" },
  { name: "F32_TANH_LO", lanes: "f32x4", value: "-20.0", doc: "tanh(10) rounds to 1 in f32: -2|x| is clamped here" },
  { name: "F32_ZERO", lanes: "f32x4", value: "0.0", doc: "0" },
  { name: "F32_NAN", lanes: "f32x4", value: "NaN", doc: "NaN" },
  { name: "F32_TWO", lanes: "f32x4", value: "2.0", doc: "2" },
  { name: "F32_NEG_ZERO", lanes: "f32x4", value: "-0.0", doc: "-0: the sign bit alone" },
  { name: "F32_FOUR", lanes: "f32x4", value: "4.0", doc: "4" },
  { name: "SIGN32", lanes: "i32x4", value: "0x80000000", doc: "f32 sign bits (V8 rebuilds the masks of abs and neg at every use)" },
  { name: "SIGN64", lanes: "i64x2", value: "0x8000000000000000", doc: "f64 sign bits" },
  { name: "ABS32", lanes: "i32x4", value: "0x7fffffff", doc: "f32 magnitude bits" },
  { name: "ABS64", lanes: "i64x2", value: "0x7fffffffffffffff", doc: "f64 magnitude bits" },
];

/**
 * The exports of the module, in order. `params` use the types ptr (a byte offset), i32, bool, f64;
 * `typed` exports exist twice, `<name>F32` and `<name>F64`, calling `impl` with T = f32 / f64 (and
 * `#` replaced by 32 / 64); `from` is the module of `impl`, relative to assembly/.
 */
export const kernelExports = [
  { name: "gemmWorkspaceBytes", params: "", result: "i32", impl: "gemmWorkspaceBytes", from: "./gemm", doc: "bytes of the gemm packing workspace" },
  { name: "constantTableAddress", params: "", result: "i32", impl: "constantTableAddress", from: "./units", doc: "where the host keeps the constant table" },
  { name: "constantTableBytes", params: "", result: "i32", impl: "constantTableBytes", from: "./units", doc: "bytes of the constant table" },
  { name: "writeConstantTable", params: "", result: "void", impl: "writeConstantTable", from: "./units", doc: "writes the constant table (once per memory, before any kernel)" },
  { name: "relaxed", params: "", result: "i32", impl: "relaxedBuild", from: "./simd", doc: "1 in the build with relaxed-SIMD multiply-adds, 0 in the plain SIMD build" },
  { name: "gemm", typed: true, params: "c: ptr, a: ptr, b: ptr, m: i32, n: i32, k: i32, transA: bool, transB: bool, alpha: f64, beta: f64, work: ptr", result: "void", impl: "gemm<T>", from: "./gemm", doc: "C = alpha op(A) op(B) + beta C" },
  { name: "gemv", typed: true, params: "y: ptr, a: ptr, x: ptr, rows: i32, cols: i32, trans: bool, alpha: f64, beta: f64", result: "void", impl: "gemv<T>", from: "./level2", doc: "y = alpha op(A) x + beta y" },
  { name: "ger", typed: true, params: "out: ptr, x: ptr, y: ptr, m: i32, n: i32, alpha: f64", result: "void", impl: "ger<T>", from: "./level2", doc: "out += alpha x y^T" },
  { name: "binary", typed: true, params: "op: i32, out: ptr, a: ptr, b: ptr, n: i32", result: "void", impl: "binary<T>", from: "./vector", doc: "op 0: add, 1: sub, 2: mul" },
  { name: "axpy", typed: true, params: "out: ptr, a: ptr, alpha: f64, n: i32", result: "void", impl: "axpy<T>", from: "./vector", doc: "out += alpha a" },
  { name: "axpby", typed: true, params: "out: ptr, a: ptr, b: ptr, alpha: f64, beta: f64, n: i32", result: "void", impl: "axpby<T>", from: "./vector", doc: "out = alpha a + beta b" },
  { name: "scale", typed: true, params: "out: ptr, a: ptr, alpha: f64, n: i32", result: "void", impl: "scale<T>", from: "./vector", doc: "out = alpha a" },
  { name: "fill", typed: true, params: "out: ptr, value: f64, n: i32", result: "void", impl: "fill<T>", from: "./vector", doc: "out = value" },
  { name: "copyBytes", params: "out: ptr, a: ptr, bytes: i32", result: "void", impl: "copyBytes", from: "./vector", doc: "memmove of n bytes (overlap allowed)" },
  { name: "maxAbsDiff", typed: true, params: "a: ptr, b: ptr, n: i32", result: "f64", impl: "maxAbsDiff<T>", from: "./vector", doc: "max |a - b| (NaN if any)" },
  { name: "maxAbs", typed: true, params: "a: ptr, n: i32", result: "f64", impl: "maxAbs<T>", from: "./vector", doc: "max |a|" },
  { name: "allFinite", typed: true, params: "a: ptr, n: i32", result: "i32", impl: "allFinite<T>", from: "./vector", doc: "1 when every value is finite" },
  { name: "dot", typed: true, params: "a: ptr, b: ptr, n: i32", result: "f64", impl: "dot<T>", from: "./vector", doc: "sum a b" },
  { name: "addRowVector", typed: true, params: "out: ptr, bias: ptr, rows: i32, cols: i32", result: "void", impl: "addRowVector<T>", from: "./vector", doc: "each row of out += bias" },
  { name: "sumRows", typed: true, params: "out: ptr, a: ptr, rows: i32, cols: i32, alpha: f64, beta: f64", result: "void", impl: "sumRows<T>", from: "./vector", doc: "out = alpha (column sums of a) + beta out" },
  { name: "unitFill", typed: true, params: "code: i32, gain: f64, offset: f64, out: ptr, x: ptr, n: i32", result: "void", impl: "unitFill#", from: "./units", doc: "unit function or slope, elementwise (code: see unitKernels)" },
  { name: "sparseDrive", typed: true, params: "out: ptr, values: ptr, rowStart: ptr, columnIndex: ptr, x: ptr, rows: i32, cols: i32, batch: i32, alpha: f64, beta: f64", result: "void", impl: "sparseDrive<T>", from: "./sparse", doc: "out = alpha X Wᵀ + beta out, W row-compressed (sparse.ts)" },
  { name: "sparseDriveTransposed", typed: true, params: "out: ptr, values: ptr, rowStart: ptr, columnIndex: ptr, z: ptr, rows: i32, cols: i32, batch: i32, alpha: f64, beta: f64", result: "void", impl: "sparseDriveTransposed<T>", from: "./sparse", doc: "out = alpha Z W + beta out, W row-compressed" },
  { name: "sparseSampledProduct", typed: true, params: "values: ptr, rowStart: ptr, columnIndex: ptr, post: ptr, pre: ptr, rows: i32, cols: i32, batch: i32, alpha: f64, beta: f64", result: "void", impl: "sparseSampledProduct<T>", from: "./sparse", doc: "values = alpha (post pre) at the stored entries + beta values" },
  { name: "activeBlocks", typed: true, params: "x: ptr, rows: i32, k: i32, index: ptr, start: ptr", result: "i32", impl: "activeBlocks<T>", from: "./active", doc: "lists each row's vector blocks with a non-zero entry (active.ts)" },
  { name: "activeProductNT", typed: true, params: "c: ptr, a: ptr, b: ptr, m: i32, n: i32, k: i32, index: ptr, start: ptr, alpha: f64, beta: f64", result: "void", impl: "activeProductNT<T>", from: "./active", doc: "C = alpha A Bᵀ + beta C over the listed blocks of A (active.ts)" },
  { name: "activeEntries", typed: true, params: "x: ptr, rows: i32, k: i32, index: ptr, start: ptr", result: "i32", impl: "activeEntries<T>", from: "./active", doc: "lists each row's non-zero entries (active.ts)" },
  { name: "activeProductNN", typed: true, params: "c: ptr, a: ptr, b: ptr, m: i32, n: i32, k: i32, index: ptr, start: ptr, alpha: f64, beta: f64", result: "void", impl: "activeProductNN<T>", from: "./active", doc: "C = alpha A B + beta C over the listed entries of A (active.ts)" },
  {
    name: "rateStep",
    typed: true,
    params: "code: i32, gain: f64, offset: f64, x: ptr, nx: ptr, t: ptr, beta: f64, dt: f64, bound: f64, n: i32",
    result: "f64",
    impl: "rateStep#",
    from: "./step",
    doc: "one fused rate-dynamics step (step.ts): the largest |next - x|, -1 on a NaN or a value beyond bound, -2 for a code it does not handle",
  },
  {
    name: "energyStep",
    typed: true,
    params: "code: i32, gain: f64, offset: f64, clip: i32, x: ptr, eta: ptr, nx: ptr, dt: f64, bound: f64, n: i32",
    result: "f64",
    impl: "energyStep#",
    from: "./step",
    doc: "one fused energy-dynamics step of a free layer (step.ts): the largest |next - x|, -1 on a NaN or a value beyond bound, -2 for a code it does not handle",
  },
];

/**
 * The WebAssembly backend's kernels, each wrapping its export pair with one template (the build
 * script's `wrapper`): a fast path when every array is a view of the backend's memory and all share
 * a dtype, else copies of ordinary arrays through scratch space, else the TypeScript kernel.
 *
 * - `params`: the TypeScript kernel's parameters (`T` is the output's array type, `R` a read-only
 *   array; a default is written `n = out.length`); the arrays are those typed T or R.
 * - `skip`: when true, nothing to do: return `out` (or `empty` for kernels without one).
 * - `out`: the output array's length and when its old values are read (else it is not copied in).
 * - `inputs`: each input array's length and when it is read at all (default: always).
 * - `call`: the export's arguments; an array's name stands for its byte offset.
 * - `stage: false`: ordinary arrays never go through scratch (the TypeScript kernel is as fast).
 * - `result`: what the kernel returns: `out` (default), `number` or `boolean` (export result 1).
 */
export const wrappers = [
  {
    kernel: "gemm",
    export: "gemm",
    params: "out: T, a: R, b: R, m: number, n: number, k: number, transA: boolean, transB: boolean, alpha: number, beta: number",
    skip: "m <= 0 || n <= 0",
    out: { length: "m * n", read: "beta !== 0" },
    inputs: { a: { length: "m * k", read: "alpha !== 0 && k > 0" }, b: { length: "k * n", read: "alpha !== 0 && k > 0" } },
    call: "out, a, b, m, n, k, transA, transB, alpha, beta, work",
  },
  {
    kernel: "gemv",
    export: "gemv",
    params: "out: T, a: R, x: R, rows: number, cols: number, trans: boolean, alpha: number, beta: number",
    out: { length: "Math.max(0, trans ? cols : rows)", read: "beta !== 0" },
    inputs: {
      a: { length: "rows * cols", read: "alpha !== 0 && rows > 0 && cols > 0" },
      x: { length: "Math.max(0, trans ? rows : cols)", read: "alpha !== 0 && rows > 0 && cols > 0" },
    },
    call: "out, a, x, rows, cols, trans, alpha, beta",
  },
  {
    kernel: "ger",
    export: "ger",
    params: "out: T, x: R, y: R, m: number, n: number, alpha: number",
    skip: "alpha === 0 || m <= 0 || n <= 0",
    out: { length: "m * n", read: "true" },
    inputs: { x: { length: "m" }, y: { length: "n" } },
    call: "out, x, y, m, n, alpha",
  },
  { kernel: "add", export: "binary", params: "out: T, a: R, b: R, n = out.length", skip: "n <= 0", out: { length: "n", read: "false" }, inputs: { a: { length: "n" }, b: { length: "n" } }, call: "0, out, a, b, n" },
  { kernel: "sub", export: "binary", params: "out: T, a: R, b: R, n = out.length", skip: "n <= 0", out: { length: "n", read: "false" }, inputs: { a: { length: "n" }, b: { length: "n" } }, call: "1, out, a, b, n" },
  { kernel: "mul", export: "binary", params: "out: T, a: R, b: R, n = out.length", skip: "n <= 0", out: { length: "n", read: "false" }, inputs: { a: { length: "n" }, b: { length: "n" } }, call: "2, out, a, b, n" },
  { kernel: "axpy", export: "axpy", params: "out: T, a: R, alpha: number, n = out.length", skip: "n <= 0", out: { length: "n", read: "true" }, inputs: { a: { length: "n" } }, call: "out, a, alpha, n" },
  {
    kernel: "axpby",
    export: "axpby",
    params: "out: T, a: R, b: R, alpha: number, beta: number, n = out.length",
    skip: "n <= 0",
    out: { length: "n", read: "false" },
    inputs: { a: { length: "n" }, b: { length: "n" } },
    call: "out, a, b, alpha, beta, n",
  },
  { kernel: "scale", export: "scale", params: "out: T, a: R, alpha: number, n = out.length", skip: "n <= 0", out: { length: "n", read: "false" }, inputs: { a: { length: "n" } }, call: "out, a, alpha, n" },
  { kernel: "fill", export: "fill", params: "out: T, value: number, n = out.length", skip: "n <= 0", out: { length: "n", read: "false" }, inputs: {}, call: "out, value, n", stage: false },
  {
    kernel: "copy",
    export: "copyBytes",
    params: "out: T, a: R, n = out.length",
    skip: "n <= 0 || (out as ReadonlyFloatArray) === a",
    out: { length: "n", read: "false" },
    inputs: { a: { length: "n" } },
    call: "out, a, n * out.BYTES_PER_ELEMENT",
    stage: false,
  },
  { kernel: "maxAbsDiff", export: "maxAbsDiff", params: "a: R, b: R, n = a.length", skip: "n <= 0", empty: "0", inputs: { a: { length: "n" }, b: { length: "n" } }, call: "a, b, n", result: "number" },
  { kernel: "maxAbs", export: "maxAbs", params: "a: R, n = a.length", skip: "n <= 0", empty: "0", inputs: { a: { length: "n" } }, call: "a, n", result: "number" },
  { kernel: "allFinite", export: "allFinite", params: "a: R, n = a.length", skip: "n <= 0", empty: "true", inputs: { a: { length: "n" } }, call: "a, n", result: "boolean" },
  { kernel: "dot", export: "dot", params: "a: R, b: R, n = a.length", skip: "n <= 0", empty: "0", inputs: { a: { length: "n" }, b: { length: "n" } }, call: "a, b, n", result: "number" },
  {
    kernel: "addRowVector",
    export: "addRowVector",
    params: "out: T, bias: R, rows: number, cols: number",
    skip: "rows <= 0 || cols <= 0",
    out: { length: "rows * cols", read: "true" },
    inputs: { bias: { length: "cols" } },
    call: "out, bias, rows, cols",
  },
  {
    kernel: "sumRows",
    export: "sumRows",
    params: "out: T, a: R, rows: number, cols: number, alpha: number, beta: number",
    skip: "cols <= 0",
    out: { length: "cols", read: "beta !== 0" },
    inputs: { a: { length: "rows * cols", read: "alpha !== 0 && rows > 0" } },
    call: "out, a, rows, cols, alpha, beta",
  },
];
