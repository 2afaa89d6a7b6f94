import { execFileSync } from 'node:child_process';

// numpy (Debian's python3-numpy) as an independent reference: each call runs one short Python
// program that reads its arguments as JSON on stdin and prints its answer as JSON.

const PYTHON = process.env.PYTHON_BIN ?? 'python3';

/** Throws a clear error when python3 or numpy is missing, naming the package to install. */
export function requireNumpy(): void {
  try {
    execFileSync(PYTHON, ['-c', 'import numpy'], { stdio: 'pipe', timeout: 30_000 });
  } catch (cause) {
    throw new Error(`numpy was not found (${PYTHON} -c "import numpy" failed); the fault-distance reference tests need it: apt-get install python3-numpy`, { cause });
  }
}

function runNumpy<T>(program: string, input: unknown): T {
  requireNumpy();
  const out = execFileSync(PYTHON, ['-c', `import json, sys\nimport numpy as np\nargs = json.load(sys.stdin)\n${program}`], {
    input: JSON.stringify(input),
    encoding: 'utf8',
    stdio: ['pipe', 'pipe', 'pipe'],
    timeout: 60_000,
    maxBuffer: 256 * 1024 * 1024,
  });
  return JSON.parse(out) as T;
}

/** numpy's `ifft(x, size) · size` of interleaved re, im values, interleaved the same way (repr keeps every digit). */
export function numpyInverseDft(interleaved: ArrayLike<number>, size: number): number[] {
  return runNumpy<number[]>(
    `x = np.array(args['x'][0::2]) + 1j * np.array(args['x'][1::2])
y = np.fft.ifft(x, args['size']) * args['size']
out = np.empty(2 * len(y))
out[0::2] = y.real
out[1::2] = y.imag
print(json.dumps(out.tolist()))`,
    { x: Array.from(interleaved), size },
  );
}

/** numpy's symmetric `hanning(n)` or `blackman(n)`. */
export function numpyWindow(name: 'hanning' | 'blackman', n: number): number[] {
  return runNumpy<number[]>(`print(json.dumps(getattr(np, args['name'])(args['n']).tolist()))`, { name, n });
}

/** |Σ w·Γ·e^{+j2πkm/size}| / Σ w for every bin, with numpy's window and inverse FFT. */
export function numpyBandPassMagnitudes(reflections: { re: number; im: number }[], window: 'rectangular' | 'hanning' | 'blackman', size: number): number[] {
  return runNumpy<number[]>(
    `g = np.array([complex(p['re'], p['im']) for p in args['g']])
n = len(g)
w = np.ones(n) if args['window'] == 'rectangular' else getattr(np, args['window'])(n)
y = np.fft.ifft(w * g, args['size']) * args['size'] / w.sum()
print(json.dumps(np.abs(y).tolist()))`,
    { g: reflections, window, size },
  );
}

/** One uniform section of a line for numpy's ABCD cascade. */
export interface NumpySection {
  impedanceOhm: number;
  velocityFactor: number;
  lengthM: number;
  /** Matched loss in dB per 100 m, the same at every frequency. */
  lossDbPer100m: number;
}

/**
 * Γ against `referenceOhm` at the input of sections (from the input) ending in `loadOhm`, each
 * section the telegrapher's-equations two-port [[cosh γl, Z0 sinh γl], [sinh γl / Z0, cosh γl]]
 * with γ = α + jω/(VF·c), multiplied in numpy.
 */
export function numpyReflectionOfSections(sections: NumpySection[], loadOhm: { re: number; im: number }, frequenciesHz: number[], referenceOhm: number): { re: number; im: number }[] {
  return runNumpy<{ re: number; im: number }[]>(
    `c0 = 299792458.0
zl = complex(args['load']['re'], args['load']['im'])
out = []
for f in args['f']:
    m = np.eye(2, dtype=complex)
    for s in args['sections']:
        alpha = s['lossDbPer100m'] / 100.0 / (20.0 / np.log(10.0))
        g = alpha + 1j * 2 * np.pi * f / (s['velocityFactor'] * c0)
        gl = g * s['lengthM']
        z0 = s['impedanceOhm']
        m = m @ np.array([[np.cosh(gl), z0 * np.sinh(gl)], [np.sinh(gl) / z0, np.cosh(gl)]])
    zin = (m[0, 0] * zl + m[0, 1]) / (m[1, 0] * zl + m[1, 1])
    r = (zin - args['r']) / (zin + args['r'])
    out.append({'re': r.real, 'im': r.imag})
print(json.dumps(out))`,
    { sections, load: loadOhm, f: frequenciesHz, r: referenceOhm },
  );
}
