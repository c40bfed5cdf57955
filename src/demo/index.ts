/** The demo chain generator's public surface: the CLI's `demo` command and tests use this. */
export {
  GENERATOR_VERSION,
  MAX_CUSTOMERS,
  generateDemoChain,
  type DemoChainOptions,
  type DemoChainResult,
  type DemoProgress,
} from './generate.js';
export { DEMO_FILES, type DemoFileKind } from './output-folder.js';
export { CATEGORIES, CHAIN_NAME, SPEND_PROFILES, STORES, ATYPICAL_PROFILE, LAPSING_PROFILE_NAME, NEW_PROFILE_NAME } from './chain.js';
export { FIRST_DATE, LAST_DATE } from './calendar.js';
export { BEHAVIOUR } from './activity.js';
export { POPULATION, atypicalCount } from './customers.js';
