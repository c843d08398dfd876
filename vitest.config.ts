import { defineConfig } from "vitest/config";


export default defineConfig({
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
