/** Public surface of the config loader. */
export { canonicalJson, CanonicalJsonError } from './canonical-json.js';
export { ConfigError, formatConfigError } from './errors.js';
export type { JsonObject, JsonValue } from './json-schema.js';
export { learnerKinds, stageKinds } from './kinds.js';
export { loadConfig, parseConfig } from './load.js';
export type { ColumnDecl, DataConfig, HoldoutConfig, LearnerConfig, ResolvedConfig, SplitConfig } from './types.js';
export { configReferenceMarkdown, configSchema, toJsonSchema } from './schema.js';
