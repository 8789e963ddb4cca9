/**
 * The release of Gapwise: the same string as "version" in package.json (tests/core/shared/version.test.ts
 * keeps the two equal). Every export and report names it beside the screening caution, the app shows
 * it in its footer and `gapwise --version` prints it. Change it with package.json and CHANGELOG.md.
 */
export const GAPWISE_VERSION = '0.1.0';

/** What exports write as their producer, e.g. "Gapwise 0.1.0". */
export const SOFTWARE = `Gapwise ${GAPWISE_VERSION}`;
