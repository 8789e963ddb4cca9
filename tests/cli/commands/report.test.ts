// gapwise report: one self-contained HTML file from a project, with the caution and the version.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { planarSamplesCsv, workspace, type Workspace } from '../run-cli.ts';
import { createProject, saveProject } from '../../../src/io/project.ts';
import { CAUTION } from '../../../src/core/caution.ts';

const version = (JSON.parse(readFileSync(resolve(__dirname, '..', '..', '..', 'package.json'), 'utf8')) as { version: string }).version;

describe('gapwise report', () => {
  let ws: Workspace;
  beforeAll(() => {
    ws = workspace();
    const project = createProject({
      samples: { fileName: 'wells.csv', text: planarSamplesCsv(), intake: { crs: 'EPSG:32633' } },
      model: { structures: [{ type: 'nugget', sill: 0.5 }, { type: 'exponential', sill: 12, scale: 80 }], trend: 'constant', transform: 'none' },
      grid: { cellSize: 10 }, threshold: 25, title: 'Wells <north>',
    });
    ws.write('p.json', saveProject(project));
  });
  afterAll(() => ws.remove());

  it('report --project writes the HTML report with the caution, the package version and the escaped title', async () => {
    const r = await ws.run('report', '--project', 'p.json', '--out', 'r.html', '--no-compare');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain(`caution: ${CAUTION}`);
    const html = ws.read('r.html');
    expect(html.startsWith('<!DOCTYPE html>')).toBe(true);
    expect(html).toContain(`gapwise ${version}`);
    expect(html).toContain('Wells &lt;north&gt;');
    expect(html).not.toContain('Wells <north>');
    expect(html.split(CAUTION).length - 1).toBeGreaterThanOrEqual(3);
    expect(html).toContain('<h3>Model comparison</h3>');
    expect(html).toContain('No comparison was made.');
  });

  it('report --title replaces the title; report without --project is refused (exit 2)', async () => {
    const r = await ws.run('report', '--project', 'p.json', '--title', 'Spring round', '--no-compare');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toContain('<h1>Spring round</h1>');
    const none = await ws.run('report', '--out', 'r.html');
    expect(none.code).toBe(2);
    expect(none.stderr).toContain('"--project FILE" is required');
  });
});
