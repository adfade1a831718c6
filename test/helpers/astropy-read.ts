/**
 * Opens files the way an astronomer would, with Debian's astropy, and collects every warning:
 * for a VOTable, astropy's validator (`astropy.io.votable.validate`) and a parse with
 * `verify='warn'` (which reports each warning, where the validator stops after ten of a kind);
 * for every file, `astropy.table.Table.read` in the given format. Warnings are recorded with
 * `warnings.catch_warnings(record=True)` and `simplefilter('always')`, so none is hidden by
 * Python's once-per-place filter; each comes back as "Category: message".
 */
import { runPython } from './python.ts';

export interface AstropyRead {
  path: string;
  rows: number;
  columns: string[];
  /** astropy's unit of each column in its generic spelling, or null. */
  units: Record<string, string | null>;
  warnings: string[];
}

export type AstropyFormat = 'votable' | 'fits' | 'ascii.csv' | 'ascii.ecsv' | 'parquet';

export function astropyRead(files: [path: string, format: AstropyFormat][]): AstropyRead[] {
  return runPython(
    `
import io, warnings
from astropy.io import votable
from astropy.table import Table
res = []
for path, fmt in json.load(sys.stdin):
    msgs = []
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter('always')
        if fmt == 'votable':
            report = io.StringIO()
            if not votable.validate(path, output=report):
                msgs.append('validator: ' + report.getvalue().strip())
            votable.parse(path, verify='warn')
        t = Table.read(path, format=fmt)
    msgs += ['%s: %s' % (w.category.__name__, w.message) for w in caught]
    res.append({'path': path, 'rows': len(t), 'columns': t.colnames, 'warnings': msgs,
                'units': {c: (None if t[c].unit is None else t[c].unit.to_string()) for c in t.colnames}})
print(json.dumps(res))
`,
    files,
  ) as AstropyRead[];
}
