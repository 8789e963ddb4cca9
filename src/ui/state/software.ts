/**
 * The name and version the app writes into reports and project files and shows in its footer
 * (src/core/version.ts, kept equal to package.json's by tests/core/version.test.ts).
 */
import { GAPWISE_VERSION } from '../../core/version.ts';

export const SOFTWARE: Readonly<{ name: string; version: string }> = Object.freeze({ name: 'Gapwise', version: GAPWISE_VERSION });
