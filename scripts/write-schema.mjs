// Regenerates schema/network.schema.json from the network declaration (run after `npm run build`).
import { writeFileSync } from "node:fs";
import { networkJsonSchema } from "../dist/index.js";
writeFileSync(new URL("../schema/network.schema.json", import.meta.url), JSON.stringify(networkJsonSchema(), null, 2) + "\n");
console.log("wrote schema/network.schema.json");
