import { fileURLToPath } from "node:url";
import { defineConfig } from "vitest/config";


export default defineConfig({
  resolve: {
    // the source of what package.json "imports" maps #kernel-builds to in Node (dist/ holds the compiled copy)
    alias: { "#kernel-builds": fileURLToPath(new URL("./src/kernels/wasm/static-builds.ts", import.meta.url)) },
  },
  test: {
    include: ["test/**/*.test.ts"],
    testTimeout: 60_000,
    deps: {
      interopDefault: false,
      optimizer: {
        ssr: {
          enabled: true,
          include: [
            "@tensorflow/tfjs-core",
            "@tensorflow/tfjs-backend-cpu",
            "@tensorflow/tfjs-core/dist/register_all_gradients.js",
          ],
        },
      },
    },
  },
});
