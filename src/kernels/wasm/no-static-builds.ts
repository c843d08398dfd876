/**
 * No WebAssembly build: what `#kernel-builds` (package.json "imports")
 * resolves to in browser bundles (the "browser" condition), so that a bundle
 * carries neither build in its entry; the asynchronous loaders import the
 * build they use on demand, after which the synchronous ones can use it too.
 * @module
 */

/** Base64 bytes of the builds available without an import on demand: none. */
export const STATIC_BUILDS: Readonly<Partial<Record<"simd" | "relaxed", string>>> = {};
