/**
 * The tables of the input bundle: which of our column names each must or may hold,
 * and of what kind. The release's `columns` map renames the user's names to these.
 */
import type { TableName } from './schema.ts';

export type ColumnType = 'id' | 'string' | 'number' | 'integer' | 'boolean';

export interface ColumnSpec {
  name: string;
  type: ColumnType;
  required: boolean;
  description: string;
}

const col = (name: string, type: ColumnType, required: boolean, description: string): ColumnSpec => ({
  name,
  type,
  required,
  description,
});

/** Fixed columns per table; parameter columns (samples), `<param>_true` and `<param>_p16/_p50/_p84` (objects) are added from the parameter list. */
export const TABLE_COLUMNS: Record<TableName, ColumnSpec[]> = {
  objects: [
    col('id', 'id', true, 'object identifier (string; 64-bit integers read exactly)'),
    col('ra', 'number', true, 'right ascension, degrees, ICRS'),
    col('dec', 'number', true, 'declination, degrees, ICRS'),
    col('redshift', 'number', true, 'redshift used in the fit'),
    col('chi2', 'number', false, 'chi-square of the best fit'),
    col('n_bands', 'integer', false, 'number of bands used in the fit'),
    col('mag', 'number', false, 'AB magnitude in the selection band (for completeness)'),
  ],
  samples: [
    col('id', 'id', true, 'object identifier'),
    col('weight', 'number', false, 'importance weight of the draw (this or log_weight)'),
    col('log_weight', 'number', false, 'natural log of the importance weight'),
    col('log_like', 'number', false, 'log likelihood of the draw'),
    col('log_prior', 'number', false, 'log interim prior density of the draw'),
    col('chain', 'integer', false, 'MCMC chain index (draws of equal weight, in chain order)'),
  ],
  photometry: [
    col('id', 'id', true, 'object identifier'),
    col('band', 'string', true, 'band name, as in the bands table'),
    col('flux', 'number', true, 'measured flux density (negative forced fluxes are measurements)'),
    col('flux_err', 'number', true, '1-sigma flux density error'),
    col('model_flux', 'number', false, 'best-fit model flux density in the band'),
    col('upper_limit', 'boolean', false, 'true when the measurement is reported as an upper limit'),
    col('limit_nsigma', 'number', false, 'the limit is this many times flux_err'),
  ],
  bands: [
    col('band', 'string', true, 'band name'),
    col('wavelength', 'number', true, 'pivot wavelength'),
    col('label', 'string', false, 'display label'),
    col('width', 'number', false, 'effective width'),
  ],
  spectra: [
    col('id', 'id', true, 'object identifier'),
    col('wavelength', 'number', true, 'observed wavelength'),
    col('flux', 'number', true, 'flux density'),
    col('flux_err', 'number', true, '1-sigma error'),
    col('mask', 'boolean', false, 'true where the pixel is masked (not used in the fit)'),
    col('model_flux', 'number', false, 'best-fit model at this wavelength'),
    col('instrument', 'string', false, 'which spectrum of the object this pixel belongs to'),
  ],
  models: [
    col('id', 'id', true, 'object identifier'),
    col('wavelength', 'number', true, 'wavelength'),
    col('flux', 'number', true, 'model flux density'),
    col('frame', 'string', false, '"observed" (default) or "rest"'),
  ],
};
