/**
 * Colours, fonts and the shared Vega-Lite config of every Posterity chart.
 *
 * Data colours are the colour-blind-safe qualitative palette of Okabe and Ito (2008,
 * "Color Universal Design", https://jfly.uni-koeln.de/color/), without its black and yellow.
 * Charts are rendered with the light-theme colours below as literal attribute values; in the
 * dark theme the site's stylesheet remaps exactly these values with attribute selectors
 * (`[fill="#0072b2"]`), using `DARK_REMAP`, so one prerendered SVG serves both themes and
 * prints in the light colours. Keep every colour a chart emits in this file.
 */

/** Light-theme colours (lower-case hex, as they appear in the SVG). */
export const COLOURS = Object.freeze({
  /** Text, axes and observed data. */
  ink: '#1a1a1a',
  /** Secondary text and tick marks. */
  muted: '#595959',
  /** Grid lines and panel frames. */
  grid: '#d9d9d9',
  /** Page colour, for legend backgrounds and halo strokes. */
  paper: '#ffffff',
  /** Shaded regions (masked spectral ranges, empty cells). */
  shade: '#bfbfbf',
  blue: '#0072b2',
  vermillion: '#d55e00',
  green: '#009e73',
  purple: '#cc79a7',
  orange: '#e69f00',
  sky: '#56b4e9',
});

/** Series colours in the order they are handed out (redshift bins, populations, parameters). */
export const SERIES: readonly string[] = Object.freeze([
  COLOURS.blue,
  COLOURS.vermillion,
  COLOURS.green,
  COLOURS.purple,
  COLOURS.orange,
  COLOURS.sky,
]);

/**
 * Dark-theme replacements for each light colour: lighter tints of the same Okabe-Ito hues,
 * chosen for at least 3:1 contrast against the dark page background (#121417).
 */
export const DARK_REMAP: Readonly<Record<string, string>> = Object.freeze({
  [COLOURS.ink]: '#e8e8e8',
  [COLOURS.muted]: '#b3b3b3',
  [COLOURS.grid]: '#3a3d42',
  [COLOURS.shade]: '#4a4d52',
  [COLOURS.paper]: '#121417',
  [COLOURS.blue]: '#62b7ef',
  [COLOURS.vermillion]: '#f39a5c',
  [COLOURS.green]: '#3fd1a5',
  [COLOURS.purple]: '#e3a9c9',
  [COLOURS.orange]: '#f2c04d',
  [COLOURS.sky]: '#9ad2f3',
});

/** Short font name in the SVG; the site's stylesheet sets the real system font stack. */
export const FONT = 'sans-serif';

/** The Vega-Lite `config` shared by all charts: transparent background, our colours, no per-mark ARIA noise. */
export function baseConfig(): Record<string, unknown> {
  return {
    background: null,
    font: FONT,
    view: { stroke: COLOURS.grid },
    axis: {
      domainColor: COLOURS.muted,
      tickColor: COLOURS.muted,
      gridColor: COLOURS.grid,
      labelColor: COLOURS.ink,
      titleColor: COLOURS.ink,
      labelFontSize: 11,
      titleFontSize: 12,
      titleFontWeight: 'normal',
      aria: false,
    },
    legend: {
      labelLimit: 320,
      labelColor: COLOURS.ink,
      titleColor: COLOURS.ink,
      labelFontSize: 11,
      titleFontSize: 11,
      titleFontWeight: 'normal',
      aria: false,
    },
    header: { labelColor: COLOURS.ink, titleColor: COLOURS.ink, labelFontSize: 11 },
    title: { color: COLOURS.ink, fontSize: 13, fontWeight: 'normal', anchor: 'start', subtitleColor: COLOURS.muted },
    mark: { aria: false },
    range: { category: [...SERIES] },
  };
}

export const SCHEMA = 'https://vega.github.io/schema/vega-lite/v6.json';
