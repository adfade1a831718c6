/**
 * PNG copies of the population figures, for download and print, rasterised from the same SVG at
 * build time with librsvg through `sharp` (present in the install as Astro's image service; no
 * browser, no canvas). When `sharp` cannot be loaded the build goes on without PNGs and the
 * pages offer the SVG only.
 */

/** Pixels per SVG pixel: a 1000 px wide figure becomes 3000 px, 10 inches at 300 dpi. */
export const PNG_SCALE = 3;
/** Resolution written into the PNG (pHYs), so print layouts size it right. */
export const PNG_DPI = 300;

type Sharp = (input: Buffer, opts: { density: number }) => {
  flatten(o: { background: string }): ReturnType<Sharp>;
  withMetadata(o: { density: number }): ReturnType<Sharp>;
  png(o: { compressionLevel: number; adaptiveFiltering: boolean }): ReturnType<Sharp>;
  toBuffer(): Promise<Buffer>;
};

let loaded: Promise<Sharp | null> | null = null;
function loadSharp(): Promise<Sharp | null> {
  // the specifier is a variable so bundlers leave this optional, native module alone
  const name = 'sharp';
  loaded ??= import(name).then((m: { default: Sharp }) => m.default).catch(() => null);
  return loaded;
}

/** Whether PNGs can be written in this install. */
export async function canRasterise(): Promise<boolean> {
  return (await loadSharp()) !== null;
}

/** The SVG as a PNG on white at `PNG_SCALE` times its size, or null when no rasteriser is available. */
export async function svgToPng(svg: string, scale = PNG_SCALE): Promise<Buffer | null> {
  const sharp = await loadSharp();
  if (!sharp) return null;
  return sharp(Buffer.from(svg), { density: 72 * scale })
    .flatten({ background: '#ffffff' })
    .withMetadata({ density: PNG_DPI })
    .png({ compressionLevel: 9, adaptiveFiltering: false })
    .toBuffer();
}
