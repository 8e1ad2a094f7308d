// One import for the whole schema: `import * as schema from "~/.server/db/schema"`.
export * from "./auth";
export * from "./audit";
export * from "./customers";
export * from "./fleet";
export * from "./device";
export * from "./digests";
export * from "./api-tokens";
export * from "./gain-sets";
export * from "./releases";
export * from "./billing";
export * from "./health";
