/**
 * The name and version the app writes into reports and project files and shows in its footer
 * (src/core/shared/version.ts, kept equal to package.json's by tests/core/shared/version.test.ts).
 */
import { GAPWISE_VERSION } from '../../core/shared/version.ts';

export const SOFTWARE: Readonly<{ name: string; version: string }> = Object.freeze({ name: 'Gapwise', version: GAPWISE_VERSION });
