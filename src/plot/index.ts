export {
  niceTicks,
  logTicks,
  formatTick,
  formatLogTicks,
  formatValue,
  scientific,
  linearScale,
  logScale,
  widenRange,
  type Scale,
  type Ticks,
  type LogTicks,
  type Rect,
} from './axes.js';
export { escapeXml } from './svg.js';
export { RAMP, rampColour, oklabLightness } from './colormap.js';
export {
  diagramSvg,
  splitByStability,
  SPECIAL_POINT_KINDS,
  SPECIAL_POINT_WORDS,
  type DiagramInput,
  type DiagramBranch,
  type DiagramPoint,
  type DiagramSpecialPoint,
  type SpecialPointKind,
  type StabilitySegment,
} from './diagram.js';
export { linePlotSvg, type LinePlotInput, type LineField } from './line.js';
export { heatMapSvg, blockAverage, type HeatMapInput, type HeatMapField, type BlockGrid } from './heatmap.js';
export { refinementSvg, type RefinementPlotInput } from './refinement.js';
export { timeSeriesSvg, type TimeSeriesInput, type TimeSeriesPanel, type TimeSeries } from './time-series.js';
