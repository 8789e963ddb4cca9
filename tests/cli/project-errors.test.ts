import { afterAll, describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { createProject, saveProject } from '../../src/io/project.ts';
import { workspace } from './run-cli.ts';

const ws = workspace();
afterAll(() => ws.remove());

const csv = readFileSync(resolve(__dirname, '..', '..', 'data-demo', 'lead-topsoil.csv'), 'utf8');

function projectText(edit: (json: Record<string, any>) => void): string {
  const json = JSON.parse(saveProject(createProject({
    samples: { fileName: 'lead-topsoil.csv', text: csv, invented: true, intake: { nonDetect: 'half' } },
    software: { name: 'gapwise', version: 'test' },
  } as Parameters<typeof createProject>[0])));
  edit(json);
  return JSON.stringify(json);
}

describe('project errors', () => {
  it('nameProjectField: an error in the samples a project holds names the project file and its field, not the samples file inside it (exit 2)', async () => {
    ws.write('text.json', projectText((j) => { j.samples.text = 'x,y,lead\n1,2,abc\n'; }));
    for (const command of ['inspect', 'fit']) {
      const r = await ws.run(command, '--project', 'text.json');
      expect(r.code, command).toBe(2);
      expect(r.stderr).toContain('error: text.json, field "samples.text" (the samples "lead-topsoil.csv" it holds): No column holds numbers');
      expect(r.stderr).not.toContain('text.json:lead-topsoil.csv');
    }
  });

  it('nameProjectField: a value column the project names and the samples lack is the field samples.intake.value', async () => {
    ws.write('value.json', projectText((j) => { j.samples.intake.value = 'nope'; }));
    const r = await ws.run('fit', '--project', 'value.json');
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('error: value.json, field "samples.intake.value", column "nope": There is no value column "nope"');
  });
});
