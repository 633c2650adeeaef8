/**
 * Write the sample plots to a directory (default: a new temporary one) for looking at them:
 *
 *   bash test/plot/make-samples.sh [out-dir]
 *
 * The SVGs come from the invented inputs in sample-data.ts. Nothing here is a test.
 */
import { mkdirSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { diagramSvg, heatMapSvg, linePlotSvg, refinementSvg } from '../../src/plot/index.js';
import {
  bratuFoldProfile,
  foldRefinement,
  hopfDiagram,
  pitchforkDiagram,
  sCurveDiagram,
  snakingDiagram,
  spotHeatMap,
  twoFieldProfile,
} from './sample-data.js';

const out = process.argv[2] ?? mkdtempSync(join(tmpdir(), 'branchline-plots-'));
mkdirSync(out, { recursive: true });
const files: Record<string, string> = {
  'diagram-s-curve.svg': diagramSvg(sCurveDiagram()),
  'diagram-pitchfork.svg': diagramSvg(pitchforkDiagram()),
  'diagram-hopf.svg': diagramSvg(hopfDiagram()),
  'diagram-snaking.svg': diagramSvg(snakingDiagram()),
  'line-bratu.svg': linePlotSvg(bratuFoldProfile()),
  'line-two-fields.svg': linePlotSvg(twoFieldProfile()),
  'heatmap-spot.svg': heatMapSvg(spotHeatMap()),
  'heatmap-large.svg': heatMapSvg({ ...spotHeatMap(401, 301), fields: spotHeatMap(401, 301).fields.slice(0, 1) }),
  'refinement.svg': refinementSvg(foldRefinement()),
};
for (const [name, svg] of Object.entries(files)) {
  writeFileSync(join(out, name), svg);
  console.log(`${join(out, name)}  ${(svg.length / 1024).toFixed(1)} KiB`);
}
