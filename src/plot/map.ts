/** One call from table to SVG map: slice, feasibility, gaps, heat layer and closed-loop trajectories. */
import { analyseSlice, type AnalysedSlice } from '../check/gaps.js';
import { InputError } from '../io/input-error.js';
import type { MpqpProblem } from '../mpqp/types.js';
import { liftPoint, makeSliceSpec } from '../partition/slice.js';
import type { LoadedProblem } from '../problem/types.js';
import type { TableFile } from '../table/format.js';
import { heatLayer } from './heat.js';
import { renderMapSvg, type ColourBy, type MapResult, type Trajectory } from './svg.js';
import { simulateClosedLoop } from './trajectory.js';

export interface MapRequest {
  /** θ indices on the horizontal and vertical axis (default [0, 1]) */
  axes?: [number, number];
  /** values of the other θ entries by index, in θ units (default: the middle of the box) */
  fixed?: Map<number, number>;
  /** draw only this part of the slice rectangle (axis units, within the box; default the whole box) */
  window?: { x0: number; x1: number; y0: number; y1: number };
  /** region fill: by law (default), by active set, or one colour per region */
  colourBy?: ColourBy;
  /** heat layer under the borders: an input name (u(0)) or "cost" (optimal cost J*(θ)) */
  heat?: string;
  /**
   * closed-loop runs under the table law: each start is a full θ (nθ entries) or a point (x, y)
   * of the slice, lifted with the fixed values; `steps` sampling periods each
   */
  trajectories?: { starts: number[][]; steps: number };
  /** page size in px */
  width?: number;
  height?: number;
}

export interface DrawnMap extends MapResult {
  /** the slice with exact polygon areas (covered, infeasible, holes) */
  slice: AnalysedSlice;
  trajectories: Trajectory[];
}

/**
 * Draw an exact 2-D slice of `table` as a standalone SVG string (`svg`), with the exact polygon
 * areas of the slice (`slice.gaps.areas`, in axis units²). `problem` decides feasibility
 * (`tableProblem(table)` gives the table's own); trajectories need its model. Throws InputError
 * for a 1-parameter table, an unknown heat name, a cost heat map of a merged table, and
 * trajectories of a directly given mpQP. The result is new data owned by the caller.
 */
export function drawMap(table: TableFile, problem: { loaded: LoadedProblem; mpqp: MpqpProblem }, request: MapRequest = {}): DrawnMap {
  if (table.dims.ntheta < 2) throw new InputError(table.name, 'axes', 'the table has a single parameter; a 2-D map needs two');
  const spec = makeSliceSpec(table.box, request.axes ?? [0, 1], request.fixed);
  if (request.window) spec.rect = { ...request.window };
  const slice = analyseSlice(table, problem.mpqp, spec);
  const heat = request.heat ? heatLayer(table, spec, request.heat) : undefined;
  const m = problem.loaded.model;
  if (request.trajectories?.starts.length && !m) throw new InputError(table.name, 'trajectories', 'closed-loop trajectories need an MPC table; this table holds a directly given mpQP');
  const trajectories = (request.trajectories?.starts ?? []).map((row) => {
    const th0 = row.length === table.dims.ntheta ? row : liftPoint(spec, row[0], row[1]);
    return simulateClosedLoop(table, m!, th0, request.trajectories!.steps);
  });
  const res = renderMapSvg(table, slice, { colourBy: request.colourBy, heat, trajectories: trajectories.length ? trajectories : undefined, width: request.width, height: request.height });
  return { ...res, slice, trajectories };
}
