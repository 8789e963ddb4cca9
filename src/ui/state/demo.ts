/**
 * The invented demo scenario, bundled with the app (no network): samples, site outline and the
 * scenario facts (value column, unit, action level). Everything in it is invented.
 */
import samplesText from '../../../data-demo/lead-topsoil.csv?raw';
import boundaryText from '../../../data-demo/site-boundary.geojson?raw';
import scenario from '../../../data-demo/scenario.json';

export interface DemoScenario {
  name: string;
  description: string;
  valueColumn: string;
  unit: string;
  actionLevel: number;
  actionLevelNote: string;
  samples: { fileName: string; text: string };
  boundary: { fileName: string; text: string };
}

export const DEMO: DemoScenario = {
  name: scenario.name,
  description: scenario.description,
  valueColumn: scenario.valueColumn,
  unit: scenario.unit,
  actionLevel: scenario.actionLevel,
  actionLevelNote: scenario.actionLevelNote,
  samples: { fileName: scenario.samplesFile, text: samplesText },
  boundary: { fileName: scenario.boundaryFile, text: boundaryText },
};
