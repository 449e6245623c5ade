// Generates the JCAMP-DX fixtures in this folder and the reference arrays
// (*.expected.json) that the Go tests of package jcamp compare against.
//
// Run through gen.sh, which installs the pinned npm packages in a scratch
// folder outside the repository:
//   jcampconverter   (reader; its parse of every fixture is stored as expected)
//   convert-to-jcamp (writer; produces the PAC, SQZ, DIF, DIF+DUP, FIX and
//                     peak-table fixtures)
// The spectra are invented: a made-up ester-like film with CH stretches,
// a strong carbonyl band and C-O bands, 4000-400 cm-1.
import { readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fromJSON } from 'convert-to-jcamp';
import { convert } from 'jcampconverter';

const out = process.argv[2];
if (!out) throw new Error('usage: node gen.mjs OUTDIR');
const pkg = (name) =>
  JSON.parse(readFileSync(join('node_modules', name, 'package.json'), 'utf8')).version;
const versions = {
  jcampconverter: pkg('jcampconverter'),
  'convert-to-jcamp': pkg('convert-to-jcamp'),
  node: process.version,
};

// Pseudo-Voigt bands: [centre cm-1, half width cm-1, height absorbance].
const bands = [
  [3450, 120, 0.08], [2955, 18, 0.42], [2925, 16, 0.55], [2870, 14, 0.25],
  [1735, 11, 1.38], [1460, 14, 0.31], [1375, 9, 0.22], [1240, 22, 0.92],
  [1160, 18, 0.48], [1045, 20, 0.71], [845, 12, 0.12], [720, 8, 0.15],
];
function absorbance(x, scale = 1, shift = 0) {
  let a = 0.015 + 0.000006 * (4000 - x);
  for (const [c, w, h] of bands) {
    const d = (x - c - shift) / w;
    a += scale * h * (0.6 / (1 + d * d) + 0.4 * Math.exp(-Math.LN2 * d * d));
  }
  return a;
}
// Single-beam throughput of an invented source/detector, arbitrary units.
function background(x) {
  const t = (x - 400) / 3600;
  return 32000 * Math.exp(-((t - 0.42) ** 2) / 0.09) * (1 - 0.3 * t) + 800;
}
const grid = (n, first = 4000, last = 400) =>
  Array.from({ length: n }, (_, i) => first + (i * (last - first)) / (n - 1));
const round = (v, d) => Math.round(v * 10 ** d) / 10 ** d;

const files = {};

// 1. AFFN, integer ordinates with YFACTOR, DELTAX = -12, $$ comments.
{
  const x = grid(301);
  const yf = 0.00001;
  const iy = x.map((v) => Math.round(absorbance(v) / yf));
  const lines = [
    '##TITLE=film A, absorbance (invented)',
    '##JCAMP-DX=5.01',
    '##DATA TYPE=INFRARED SPECTRUM',
    '##ORIGIN=bandsolve test fixtures',
    '##OWNER=public domain',
    '$$ ordinates are integers; multiply by YFACTOR',
    '##XUNITS=1/CM',
    '##YUNITS=ABSORBANCE',
    '##RESOLUTION=4',
    '##XFACTOR=1',
    `##YFACTOR=${yf}`,
    '##FIRSTX=4000',
    '##LASTX=400',
    '##DELTAX=-12',
    '##NPOINTS=301',
    `##FIRSTY=${iy[0] * yf}`,
    `##MINY=${Math.min(...iy) * yf}`,
    `##MAXY=${Math.max(...iy) * yf}`,
    '##XYDATA=(X++(Y..Y))',
  ];
  for (let i = 0; i < x.length; i += 8) {
    let l = String(x[i]);
    for (let j = i; j < Math.min(i + 8, x.length); j++) l += ' ' + iy[j];
    if (i === 96) l += ' $$ carbonyl region follows';
    lines.push(l);
  }
  lines.push('##END=');
  files['ir_affn.jdx'] = lines.join('\n') + '\n';
}

// 2. AFFN with decimal ordinates, YFACTOR=1, CRLF line ends and a UTF-8 BOM.
{
  const x = grid(451);
  const y = x.map((v) => round(absorbance(v, 0.9, 3), 5));
  const lines = [
    '##TITLE=film A after 10 min, absorbance (invented)',
    '##JCAMP-DX=4.24',
    '##DATA TYPE=INFRARED SPECTRUM',
    '##ORIGIN=bandsolve test fixtures',
    '##OWNER=public domain',
    '##X UNITS=1/CM',
    '##Y_UNITS=ABSORBANCE',
    '##X-FACTOR=1.0',
    '##Y FACTOR=1.0',
    '##FIRST X=4000.0',
    '##LAST X=400.0',
    '##NPOINTS=451',
    `##FIRSTY=${y[0]}`,
    '##XYDATA=(X++(Y..Y))',
  ];
  for (let i = 0; i < x.length; i += 6) {
    let l = x[i].toFixed(1);
    for (let j = i; j < Math.min(i + 6, x.length); j++) l += ' ' + y[j].toFixed(5);
    lines.push(l);
  }
  lines.push('##END=');
  files['ir_affn_crlf_bom.jdx'] = '\ufeff' + lines.join('\r\n') + '\r\n';
}

// 3-7. Compressed forms written by convert-to-jcamp, 467 points.
const x467 = grid(467);
const absA = x467.map((v) => absorbance(v));
const tra = x467.map((v) => 10 ** -absorbance(v, 0.8));
const sb = x467.map((v) => background(v) * 10 ** -absorbance(v, 0.6));
function ctj(x, y, enc, title, yUnits, factors) {
  return fromJSON(
    { x, y },
    {
      xyEncoding: enc,
      info: {
        title, dataType: 'INFRARED SPECTRUM', xUnits: '1/CM', yUnits,
        origin: 'bandsolve test fixtures', owner: 'public domain', ...factors,
      },
    },
  ) + '\n';
}
files['ir_fix.jdx'] = ctj(x467, absA, 'FIX', 'film A, FIX form', 'ABSORBANCE', { xFactor: 1, yFactor: 0.00001 });
files['ir_pac.jdx'] = ctj(x467, absA, 'PAC', 'film A, PAC form', 'ABSORBANCE', { xFactor: 1, yFactor: 0.00001 });
files['ir_sqz.jdx'] = ctj(x467, sb, 'SQZ', 'film A single beam, SQZ form', 'ARBITRARY UNITS', { xFactor: 1, yFactor: 0.01 });
files['ir_dif.jdx'] = ctj(x467, absA, 'DIF', 'film A, DIF form', 'ABSORBANCE', { xFactor: 1, yFactor: 0.00001 });
files['ir_difdup.jdx'] = ctj(x467, tra, 'DIFDUP', 'film A transmittance, DIF+DUP form', 'TRANSMITTANCE', { xFactor: 1, yFactor: 0.0001 });
// Factors left for convert-to-jcamp to choose (it picks non-decimal XFACTOR).
files['ir_difdup_autofactor.jdx'] = ctj(x467, absA, 'DIFDUP', 'film A, DIF+DUP, chosen factors', 'ABSORBANCE', {});

// 8. XYPOINTS with unevenly spaced abscissae.
{
  const n = 200;
  const x = Array.from({ length: n }, (_, i) => round(4000 - 3600 * (i / (n - 1)) ** 1.15, 2));
  const y = x.map((v) => round(absorbance(v), 4));
  const lines = [
    '##TITLE=film A, uneven abscissae (invented)',
    '##JCAMP-DX=5.01',
    '##DATA TYPE=INFRARED SPECTRUM',
    '##ORIGIN=bandsolve test fixtures',
    '##OWNER=public domain',
    '##XUNITS=1/CM',
    '##YUNITS=ABSORBANCE',
    '##XFACTOR=1',
    '##YFACTOR=1',
    `##FIRSTX=${x[0]}`,
    `##LASTX=${x[n - 1]}`,
    `##NPOINTS=${n}`,
    '##XYPOINTS=(XY..XY)',
  ];
  for (let i = 0; i < n; i += 3) {
    const parts = [];
    for (let j = i; j < Math.min(i + 3, n); j++) parts.push(`${x[j]}, ${y[j]}`);
    lines.push(parts.join('; '));
  }
  lines.push('##END=');
  files['ir_xypoints.jdx'] = lines.join('\n') + '\n';
}

// 9. Hand-coded SQZ with DUP for a difference spectrum (sample minus
// reference), where long flat stretches of exact zero compress to DUP runs.
// Encoding per JCAMP-DX 4.24 table of pseudo-digits (SQZ @A-I / a-i, DUP S-Z s).
const SQZP = '@ABCDEFGHI', SQZN = '@abcdefghi', DUPC = ' STUVWXYZs';
const sqz = (v) => {
  const s = String(Math.abs(v));
  return (v < 0 ? SQZN : SQZP)[+s[0]] + s.slice(1);
};
const dup = (n) => DUPC[+String(n)[0]] + String(n).slice(1);
{
  const x = grid(361); // DELTAX = -10
  const yf = 0.000001;
  const iy = x.map((v) => {
    const d = absorbance(v, 1.04, -1.5) - absorbance(v);
    const r = Math.round(d / yf);
    return Math.abs(r) < 400 ? 0 : r; // flat where nothing changes
  });
  const lines = [
    '##TITLE=difference, 20 min minus 0 min (invented)',
    '##JCAMP-DX=5.01',
    '##DATA TYPE=INFRARED SPECTRUM',
    '##ORIGIN=bandsolve test fixtures',
    '##OWNER=public domain',
    '##XUNITS=1/CM',
    '##YUNITS=ABSORBANCE',
    '##XFACTOR=1',
    `##YFACTOR=${yf}`,
    '##FIRSTX=4000',
    '##LASTX=400',
    '##DELTAX=-10',
    '##NPOINTS=361',
    '##XYDATA=(X++(Y..Y))',
  ];
  let i = 0;
  while (i < iy.length) {
    let l = String(x[i]);
    while (i < iy.length) {
      let run = 1;
      while (i + run < iy.length && iy[i + run] === iy[i]) run++;
      const tok = sqz(iy[i]) + (run > 1 ? dup(run) : '');
      if (l.length + tok.length > 80) break;
      l += tok;
      i += run;
    }
    lines.push(l);
  }
  lines.push('##END=');
  files['ir_diff_sqzdup.jdx'] = lines.join('\n') + '\n';
}

// 10. LINK file: background and sample single beams, their absorbance, and a
// peak table block (not a spectrum; readers return the three spectra).
{
  const x = grid(241); // DELTAX = -15
  const bg = x.map((v) => background(v));
  const sm = x.map((v) => background(v) * 10 ** -absorbance(v, 0.7));
  const ab = x.map((v, i) => Math.log10(bg[i] / sm[i]));
  const inner = (id, s) =>
    s.replace('##JCAMP-DX=4.24\n', `##JCAMP-DX=4.24\n##BLOCK_ID=${id}\n`).trimEnd();
  const peaks = { x: [2925, 1735, 1240, 1045], y: [0.385, 0.966, 0.644, 0.497] };
  const blocks = [
    inner(1, fromJSON({ x, y: bg }, { xyEncoding: 'DIFDUP', info: { title: 'background single beam', dataType: 'INFRARED SPECTRUM', xUnits: '1/CM', yUnits: 'ARBITRARY UNITS', xFactor: 1, yFactor: 0.01 } })),
    inner(2, fromJSON({ x, y: sm }, { xyEncoding: 'SQZ', info: { title: 'sample single beam', dataType: 'INFRARED SPECTRUM', xUnits: '1/CM', yUnits: 'ARBITRARY UNITS', xFactor: 1, yFactor: 0.01 } })),
    inner(3, fromJSON({ x, y: ab }, { xyEncoding: 'FIX', info: { title: 'sample absorbance', dataType: 'INFRARED SPECTRUM', xUnits: '1/CM', yUnits: 'ABSORBANCE', xFactor: 1, yFactor: 0.00001 } })),
    inner(4, fromJSON(peaks, { info: { title: 'sample peaks', dataType: 'INFRARED PEAK TABLE', xUnits: '1/CM', yUnits: 'ABSORBANCE' } })),
  ];
  files['ir_link.jdx'] = [
    '##TITLE=film A measurement (invented)',
    '##JCAMP-DX=5.01',
    '##DATA TYPE=LINK',
    '##BLOCKS=4',
    ...blocks,
    '##END=',
  ].join('\n') + '\n';
}

// 11. Peak table only: must be rejected as "not a spectrum".
files['ir_peaktable.jdx'] = fromJSON(
  { x: [2925, 1735, 1240, 1045], y: [0.385, 0.966, 0.644, 0.497] },
  { info: { title: 'film A peaks', dataType: 'INFRARED PEAK TABLE', xUnits: '1/CM', yUnits: 'ABSORBANCE' } },
) + '\n';

// Files written by the Go package (go test -update in io/jcamp) are only
// read here, to check that another reader accepts Write's output.
const goWritten = readdirSync(out).filter((f) => /^go_written_.*\.jdx$/.test(f));
for (const name of goWritten) files[name] = null;

for (const [name, given] of Object.entries(files)) {
  let text = given;
  if (text === null) text = readFileSync(join(out, name), 'utf8');
  else writeFileSync(join(out, name), text);
  if (name === 'ir_peaktable.jdx') continue;
  let input = text.replace(/^\ufeff/, '');
  // jcampconverter has no ##XYPOINTS record; it reads ##XYDATA=(XY..XY)
  // (no "++") as X,Y pairs, so the pairs are cross-checked under that label.
  const xyPoints = input.includes('##XYPOINTS=');
  if (xyPoints) input = input.replace('##XYPOINTS=(XY..XY)', '##XYDATA=(XY..XY)');
  const parsed = convert(input);
  const blocks = parsed.flatten
    .filter((e) => e.spectra?.length && (xyPoints || !e.spectra[0].isPeaktable))
    .map((e) => ({
      title: e.title,
      dataType: e.dataType,
      xUnits: e.spectra[0].xUnits,
      yUnits: e.spectra[0].yUnits,
      x: Array.from(e.spectra[0].data.x),
      y: Array.from(e.spectra[0].data.y),
    }));
  const expected = {
    source: `jcampconverter ${versions.jcampconverter} convert(text).flatten (peak tables dropped)` +
      (xyPoints ? '; ##XYPOINTS=(XY..XY) renamed ##XYDATA=(XY..XY) for it' : ''),
    writer: given === null
      ? 'bandsolve io/jcamp Write'
      : name.startsWith('ir_affn') || name === 'ir_xypoints.jdx' || name === 'ir_diff_sqzdup.jdx'
        ? 'gen.mjs (hand-coded)'
        : `convert-to-jcamp ${versions['convert-to-jcamp']} fromJSON`,
    versions,
    blocks,
  };
  writeFileSync(join(out, name.replace(/\.jdx$/, '.expected.json')), JSON.stringify(expected) + '\n');
}
console.log('read', Object.keys(files).length, 'fixtures with', JSON.stringify(versions));
