// The colours and line styles of every roundwire chart, here and in the Grafana dashboard
// (grafana/dashboards/roundwire.json repeats these hex values; a test holds them equal).
// Colours come from the palette of Okabe and Ito ("Color Universal Design", 2008), chosen so
// that people with the common colour-vision deficiencies still tell them apart. A method keeps
// one colour everywhere, so a reader who learned that FedLin is blue in one report finds it
// blue in a comparison and on the dashboard. What a colour cannot carry is said by line style:
// a prediction is dashed and a measurement solid, a downlink dotted and an uplink solid.

import type { MethodName } from '../algorithm/method.js';

/** The eight colours of Okabe and Ito (2008), by their names in that work. */
export const OKABE_ITO = {
  black: '#000000',
  orange: '#E69F00',
  skyBlue: '#56B4E9',
  bluishGreen: '#009E73',
  yellow: '#F0E442',
  blue: '#0072B2',
  vermillion: '#D55E00',
  reddishPurple: '#CC79A7',
} as const;

/**
 * One colour per method. Yellow is left out: a thin yellow line on white is hard to see. The
 * centralized baseline gd is black, the reference the others are read against.
 */
export const METHOD_COLOURS: Readonly<Record<MethodName, string>> = {
  gd: OKABE_ITO.black,
  fedavg: OKABE_ITO.orange,
  fedprox: OKABE_ITO.skyBlue,
  fednova: OKABE_ITO.bluishGreen,
  scaffold: OKABE_ITO.reddishPurple,
  fedlin: OKABE_ITO.blue,
  fedsplit: OKABE_ITO.vermillion,
};

export const METHOD_NAMES = Object.keys(METHOD_COLOURS) as MethodName[];

export function isMethodName(name: string): name is MethodName {
  return Object.hasOwn(METHOD_COLOURS, name);
}

/** The method's colour; callers pass names they have checked with isMethodName. */
export function methodColour(name: string): string {
  if (!isMethodName(name))
    throw new RangeError(`no colour for "${name}": not a method (${METHOD_NAMES.join(', ')})`);
  return METHOD_COLOURS[name];
}

/** Bytes by layer: payload (the information), encoded (the codec's frames), wire (the sockets'). */
export const LAYER_COLOURS = {
  payload: OKABE_ITO.blue,
  encoded: OKABE_ITO.orange,
  wire: OKABE_ITO.reddishPurple,
} as const;

/** Where a client's round time goes, in the per-client timeline; idle is a neutral grey. */
export const ACTIVITY_COLOURS = {
  compute: OKABE_ITO.blue,
  transfer: OKABE_ITO.orange,
  idle: '#D4D4D4',
} as const;

/**
 * A client's state in the live view's tiles (server/live-view/client-board.ts): work in blue,
 * traffic in orange as in the timeline above, a finished client waiting in sky blue, a dropped
 * update in vermillion, a lost client black; idle is the timeline's neutral grey.
 */
export const CLIENT_STATE_COLOURS = {
  idle: ACTIVITY_COLOURS.idle,
  sending: OKABE_ITO.orange,
  computing: OKABE_ITO.blue,
  waiting: OKABE_ITO.skyBlue,
  dropped: OKABE_ITO.vermillion,
  lost: OKABE_ITO.black,
} as const;

/** Bars and single-series marks that stand for no method. */
export const NEUTRAL_MARK_COLOUR = OKABE_ITO.skyBlue;

/** Vega-Lite stroke dash arrays (pixels drawn, pixels skipped, ...). */
export const SOLID_DASH: readonly number[] = [1, 0];
export const PREDICTED_DASH: readonly number[] = [6, 4];
export const DOTTED_DASH: readonly number[] = [2, 2];
/**
 * The held-out accuracy chart draws three lines in the method's colour: the pooled test set
 * solid, the clients' mean dotted, the worst client dash-dotted.
 */
export const ACCURACY_DASHES = {
  pooled: SOLID_DASH,
  mean: DOTTED_DASH,
  worst: [10, 3, 2, 3] as readonly number[],
} as const;

/**
 * A predicted band is an area in the method's colour behind its curve: light where a single run
 * is expected, darker for the interval of the mean (which lies inside it).
 */
export const BAND_OPACITIES = { 'single-run': 0.15, mean: 0.35 } as const;

/** Traffic direction by line style and point shape, so that colour stays free for the layer. */
export const DIRECTION_STYLES = {
  up: { dash: SOLID_DASH, shape: 'triangle-up' },
  down: { dash: DOTTED_DASH, shape: 'triangle-down' },
} as const;

/**
 * Line styles that tell apart the variants of one method in a comparison (same colour). The
 * predicted dash is not among them: on every page a line dashed like that is a prediction.
 * Beyond this many variants of one method the styles repeat; the table holds the numbers.
 */
export const VARIANT_DASHES: readonly (readonly number[])[] = [
  SOLID_DASH,
  DOTTED_DASH,
  [10, 3, 2, 3],
  [14, 4],
  [10, 3, 2, 3, 2, 3],
  [2, 6],
];

/** Grafana line styles for the same meanings (a panel's custom.lineStyle). */
export const GRAFANA_LINE_STYLES = {
  predicted: { fill: 'dash', dash: [10, 10] },
  down: { fill: 'dot', dash: [0, 10] },
} as const;
