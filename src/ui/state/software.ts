/**
 * The name and version the app writes into reports and project files. The version is kept equal to
 * package.json's by tests/ui/state/software.test.ts (the ui layer does not import package.json).
 */
export const SOFTWARE: Readonly<{ name: string; version: string }> = Object.freeze({ name: 'Gapwise', version: '0.1.0' });
