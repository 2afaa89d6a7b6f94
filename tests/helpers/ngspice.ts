import { execFileSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

/** One frequency point of an ngspice AC analysis: every requested vector as a complex value. */
export interface AcPoint {
  frequencyHz: number;
  values: Record<string, { re: number; im: number }>;
}

const NGSPICE_BINARY = process.env.NGSPICE_BIN ?? 'ngspice';

/** Throws a clear error when ngspice is not installed, naming the package to install. */
export function requireNgspice(): void {
  try {
    execFileSync(NGSPICE_BINARY, ['--version'], { stdio: 'pipe', timeout: 10_000 });
  } catch (cause) {
    throw new Error(
      `ngspice was not found or did not run (${NGSPICE_BINARY}); the transmission-line reference tests need it: apt-get install ngspice`,
      { cause },
    );
  }
}

/**
 * Runs an AC analysis in ngspice batch mode and returns the requested vectors at each frequency.
 * `circuit` is the netlist body without title, analysis or `.end`; `analysis` is an ngspice AC
 * command such as `ac lin 5 1e6 5e6`; `vectors` are expressions such as `v(in)` or `i(vsrc)`.
 * Values are written with 15 significant digits (`option numdgt=15`) so the comparison is limited by
 * the simulator, not by the text format.
 */
export function runNgspiceAc(circuit: string, analysis: string, vectors: string[]): AcPoint[] {
  requireNgspice();
  const dir = mkdtempSync(join(tmpdir(), 'gammaline-ngspice-'));
  try {
    const outFile = join(dir, 'ac.txt');
    const netlist = [
      '* gammaline reference circuit',
      circuit.trim(),
      '.control',
      'set wr_singlescale',
      'set wr_vecnames',
      'option numdgt=15',
      analysis,
      `wrdata ${outFile} ${vectors.join(' ')}`,
      'quit',
      '.endc',
      '.end',
      '',
    ].join('\n');
    const netlistFile = join(dir, 'circuit.cir');
    writeFileSync(netlistFile, netlist);
    let log = '';
    try {
      log = execFileSync(NGSPICE_BINARY, ['-b', netlistFile], { cwd: dir, encoding: 'utf8', stdio: 'pipe', timeout: 60_000 });
    } catch (cause) {
      throw new Error(`ngspice failed on the reference circuit:\n${netlist}`, { cause });
    }
    if (!existsSync(outFile)) throw new Error(`ngspice wrote no AC result; its output was:\n${log}\nfor the circuit:\n${netlist}`);
    return parseWrdata(readFileSync(outFile, 'utf8'), vectors);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

/** Parses `wrdata` with wr_singlescale: a header line, then per row the frequency and re, im of each vector. */
function parseWrdata(text: string, vectors: string[]): AcPoint[] {
  const lines = text.split('\n').map((l) => l.trim()).filter((l) => l.length > 0);
  const points: AcPoint[] = [];
  for (const line of lines.slice(1)) {
    const cols = line.split(/\s+/).map(Number);
    if (cols.length !== 1 + 2 * vectors.length || cols.some((c) => !Number.isFinite(c))) {
      throw new Error(`Unexpected ngspice wrdata row: "${line}"`);
    }
    const values: AcPoint['values'] = {};
    vectors.forEach((name, k) => {
      values[name] = { re: cols[1 + 2 * k] as number, im: cols[2 + 2 * k] as number };
    });
    points.push({ frequencyHz: cols[0] as number, values });
  }
  if (points.length === 0) throw new Error('ngspice wrdata file had no data rows.');
  return points;
}
