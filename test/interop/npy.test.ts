/**
 * .npy / .npz files: byte-for-byte against NumPy's own writer and read back by NumPy bit for bit (when
 * python3 with NumPy is installed; skipped with a printed reason otherwise), CRC-32 against its published
 * check value and Node's zlib.crc32 (an independent implementation), and round trips of random arrays.
 * Format references: NEP 1 / numpy.lib.format (the .npy layout), PKWARE APPNOTE.TXT (zip).
 */
import { spawnSync } from "node:child_process";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import zlib from "node:zlib";
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import {
  buildNetwork, crc32, decodeNpy, decodeNpyText, EbbflowError, encodeNpy, encodeNpyText, modelArrays, modelFromNpz, modelToJson,
  modelToNpz, readZip, writeZip, type Network,
} from "../../src/index.js";
import { check } from "../helpers/property.js";

const numpyProbe = spawnSync("python3", ["-c", "import numpy; print(numpy.__version__)"], { encoding: "utf8" });
const numpy = numpyProbe.status === 0 ? numpyProbe.stdout.trim() : undefined;
if (numpy === undefined) console.log(`NumPy checks skipped: python3 -c "import numpy" failed (${(numpyProbe.stderr || numpyProbe.error?.message || "").trim().split("\n").at(-1)})`);

/** Runs a Python snippet with NumPy; returns its stdout. */
function python(code: string, ...args: string[]): string {
  const r = spawnSync("python3", ["-c", code, ...args], { encoding: "utf8" });
  if (r.status !== 0) throw new Error(`python3 failed: ${r.stderr}`);
  return r.stdout;
}

const hex = (b: Uint8Array) => Buffer.from(b.buffer, b.byteOffset, b.byteLength).toString("hex");

function strip(dtype: "float32" | "float64"): Network {
  return buildNetwork({
    seed: 7,
    dtype,
    layers: [
      { name: "touch", size: 8, role: "input" },
      { name: "hidden.1", size: 5, role: "hidden" },
      { name: "texture", size: 2, role: "output" },
    ],
    connections: [
      { from: "touch", to: "hidden.1", feedback: { kind: "separate", learned: true } },
      { from: "hidden.1", to: "texture", feedback: { kind: "tied", gain: 0.5 } },
    ],
  });
}

describe("CRC-32 (APPNOTE 4.4.7)", () => {
  it('check value of "123456789" is 0xCBF43926 (the CRC-32 check value, from memory) and agrees with zlib.crc32', () => {
    expect(crc32(new TextEncoder().encode("123456789"))).toBe(0xcbf43926);
    expect(crc32(new Uint8Array(0))).toBe(0);
    return check(fc.property(fc.uint8Array({ maxLength: 300 }), fc.nat(300), (bytes, cut) => {
      expect(crc32(bytes)).toBe(zlib.crc32(bytes));
      const k = Math.min(cut, bytes.length);
      expect(crc32(bytes.subarray(k), crc32(bytes.subarray(0, k)))).toBe(zlib.crc32(bytes)); // running CRC
    }));
  });
});

describe(".npy round trips (no NumPy needed)", () => {
  it("any float64/float32/int32 array, any layout, decodes to the same bits (NaN payloads too)", () =>
    check(
      fc.property(
        fc.constantFrom("f8", "f4", "i4"),
        fc.array(fc.integer({ min: 0, max: 4 }), { maxLength: 3 }),
        fc.boolean(),
        fc.uint8Array({ minLength: 512, maxLength: 512 }),
        (kind, shape, fortran, noise) => {
          const n = shape.reduce((a, b) => a * b, 1);
          const bytes = noise.slice(0, n * (kind === "f8" ? 8 : 4));
          const data = kind === "f8" ? new Float64Array(bytes.buffer, 0, n) : kind === "f4" ? new Float32Array(bytes.buffer, 0, n) : new Int32Array(bytes.buffer, 0, n);
          const stride = fortran ? shape.map((_, d) => shape.slice(0, d).reduce((a, b) => a * b, 1)) : shape.map((_, d) => shape.slice(d + 1).reduce((a, b) => a * b, 1));
          const file = encodeNpy({ data, shape, stride, offset: 0 });
          expect(file.length % 64).toBe(((n * data.BYTES_PER_ELEMENT) % 64)); // data starts on a 64-byte boundary (ARRAY_ALIGN)
          const back = decodeNpy(file);
          expect(back.shape).toEqual(shape);
          expect(back.stride).toEqual(n === 0 ? back.stride : stride.map((s, d) => (shape[d] === 1 ? back.stride[d] : s)));
          expect(hex(new Uint8Array(back.data.buffer, back.data.byteOffset, back.data.byteLength))).toBe(hex(bytes));
        },
      ),
    ));

  it("text as a 0-d string array, and errors for damaged files", () => {
    for (const t of ["", "touch->hidden", "héllo 🌊 ✓"]) expect(decodeNpyText(encodeNpyText(t))).toBe(t);
    const good = encodeNpy(new Float64Array([1, 2, 3]));
    const expectCode = (f: () => unknown, code: string) => expect(() => f()).toThrow(expect.objectContaining({ code }) as unknown as Error);
    expectCode(() => decodeNpy(good.subarray(0, good.length - 1)), "parse_error");
    expectCode(() => decodeNpy(new Uint8Array(20)), "parse_error");
    expectCode(() => decodeNpy(encodeNpyText("x")), "unsupported");
    expectCode(() => decodeNpyText(good), "parse_error");
    expectCode(() => encodeNpy({ data: [1, 2], shape: [2], stride: [1], offset: 0 }), "unsupported");
  });
});

describe(".npz archives (zip store)", () => {
  it("a model survives modelToNpz -> modelFromNpz bit for bit (float64 and float32)", () => {
    for (const dtype of ["float64", "float32"] as const) {
      const net = strip(dtype);
      expect(modelToJson(modelFromNpz(modelToNpz(net)))).toBe(modelToJson(net));
    }
  });

  it("a flipped byte fails the CRC check; missing or misshapen entries are typed errors naming the entry", () => {
    const zip = modelToNpz(strip("float64"));
    const entries = readZip(zip);
    expect(entries.map((e) => e.name)).toEqual(["network.npy", "weights.touch.hidden%2E1.npy", "feedback.touch.hidden%2E1.npy", "weights.hidden%2E1.texture.npy", "bias.hidden%2E1.npy", "bias.texture.npy"]);
    const damaged = zip.slice();
    damaged[200] = damaged[200]! ^ 1;
    expect(() => readZip(damaged, "m.npz")).toThrow(/CRC-32/);
    const without = writeZip(entries.filter((e) => !e.name.startsWith("bias.texture")));
    expect(() => modelFromNpz(without)).toThrow(expect.objectContaining({ code: "parse_error", path: "npz:bias.texture" }) as unknown as Error);
    const misshapen = writeZip(entries.map((e) => (e.name === "bias.texture.npy" ? { name: e.name, bytes: encodeNpy(new Float64Array(3)) } : e)));
    expect(() => modelFromNpz(misshapen)).toThrow(expect.objectContaining({ code: "shape_mismatch", path: "npz:bias.texture" }) as unknown as Error);
    const extra = writeZip([...entries, { name: "bias.nobody.npy", bytes: encodeNpy(new Float64Array(1)) }]);
    expect(() => modelFromNpz(extra)).toThrow(EbbflowError);
  });
});

describe.skipIf(numpy === undefined)(`NumPy ${numpy ?? "(absent)"} reads and writes the same bytes`, () => {
  const dir = mkdtempSync(path.join(tmpdir(), "ebbflow-npy-"));

  it("encodeNpy writes exactly numpy.save's bytes (C and Fortran order, f8, f4, i4, u1, 0-d, empty)", () => {
    const cases: { code: string; data: Float64Array | Float32Array | Int32Array | Uint8Array; shape: number[]; fortran?: boolean }[] = [
      { code: "np.array([[1.5,-2,np.pi],[1e-300,np.nan,np.inf]])", data: new Float64Array([1.5, -2, Math.PI, 1e-300, NaN, Infinity]), shape: [2, 3] },
      { code: "np.asfortranarray(np.arange(6, dtype='<f4').reshape(2,3)/7)", data: Float32Array.from([0, 3, 1, 4, 2, 5], (x) => Math.fround(Math.fround(x) / 7)), shape: [2, 3], fortran: true },
      { code: "np.arange(-3, 9, dtype='<i4').reshape(3,2,2)", data: Int32Array.from({ length: 12 }, (_, i) => i - 3), shape: [3, 2, 2] },
      { code: "np.arange(5, dtype='u1')", data: Uint8Array.from([0, 1, 2, 3, 4]), shape: [5] },
      { code: "np.array(2.5)", data: new Float64Array([2.5]), shape: [] },
      { code: "np.zeros((0, 4))", data: new Float64Array(0), shape: [0, 4] },
    ];
    // one Python run writes every case with numpy.save into memory and prints the bytes as hex
    const theirs = JSON.parse(python(`import numpy as np, io, json\ndef saved(a):\n    b = io.BytesIO(); np.save(b, a); return b.getvalue().hex()\nprint(json.dumps([${cases.map((c) => `saved(${c.code})`).join(", ")}]))`)) as string[];
    cases.forEach((c, k) => {
      const stride = c.fortran ? [1, c.shape[0]!] : c.shape.map((_, d) => c.shape.slice(d + 1).reduce((a, b) => a * b, 1));
      expect(hex(encodeNpy({ data: c.data, shape: c.shape, stride, offset: 0 })), c.code).toBe(theirs[k]);
    });
  });

  it("NumPy reads an exported model bit for bit (.npz via numpy.load, weights and declaration)", () => {
    for (const dtype of ["float64", "float32"] as const) {
      const net = strip(dtype);
      const file = path.join(dir, `model-${dtype}.npz`);
      writeFileSync(file, modelToNpz(net));
      const report = JSON.parse(python("import numpy as np, sys, json; f = np.load(sys.argv[1]); print(json.dumps({k: [str(f[k].dtype), list(f[k].shape), f[k].tobytes().hex()] for k in f.files if k != 'network'} | {'network': json.loads(str(f['network']))}))", file)) as Record<string, unknown>;
      for (const a of modelArrays(net)) {
        const d = a.view.data;
        expect(report[a.key], a.key).toEqual([dtype, a.view.shape, hex(new Uint8Array(d.buffer, d.byteOffset, d.byteLength))]);
      }
      expect((report.network as { layers: { name: string }[] }).layers.map((l) => l.name)).toEqual(["touch", "hidden.1", "texture"]);
    }
  });

  it("decodeNpy / readZip read what NumPy writes: big-endian, Fortran order, numpy.savez archives", () => {
    const npz = path.join(dir, "numpy.npz");
    python("import numpy as np, sys; np.savez(sys.argv[1], a=np.arange(6, dtype='>f8').reshape(2,3)/3, b=np.asfortranarray(np.arange(6, dtype='<f4').reshape(3,2)), c=np.array([7, -1], dtype='<i4'))", npz);
    const entries = new Map(readZip(new Uint8Array(readFileSync(npz))).map((e) => [e.name, decodeNpy(e.bytes, e.name)]));
    const a = entries.get("a.npy")!;
    expect([a.dtype, a.shape, Array.from(a.data)]).toEqual(["float64", [2, 3], [0, 1 / 3, 2 / 3, 1, 4 / 3, 5 / 3]]);
    const b = entries.get("b.npy")!;
    expect([b.dtype, b.shape, b.stride]).toEqual(["float32", [3, 2], [1, 3]]); // Fortran order kept as strides
    for (let i = 0; i < 3; i++) for (let j = 0; j < 2; j++) expect(b.data[b.offset + i * b.stride[0]! + j * b.stride[1]!]).toBe(i * 2 + j);
    expect(Array.from(entries.get("c.npy")!.data)).toEqual([7, -1]);
  });
});
