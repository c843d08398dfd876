// ebbflow is published as ES modules only (see README, "Install"). `require("ebbflow")` and
// `require("ebbflow/node")` resolve here (the package's "require" condition) and throw this message,
// rather than Node's ERR_PACKAGE_PATH_NOT_EXPORTED, so that the way out is named.
"use strict";
const error = new Error(
  'ebbflow is an ES module package and cannot be loaded with require(). Use `import { buildNetwork } from "ebbflow"` ' +
    '(in a .mjs file, or a package with "type": "module"), or from CommonJS `const ebbflow = await import("ebbflow")`.',
);
error.code = "ERR_REQUIRE_ESM";
throw error;
