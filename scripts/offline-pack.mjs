#!/usr/bin/env node
// npm run offline:pack — builds @gammaline/calc, the calculations of shared/ as an offline npm package:
// ES modules with type declarations compiled by tsc (packages/calc/tsconfig.json), fft.js vendored so
// zod is the only dependency, a package.json of its own, then `npm pack` into dist/. The tarball's
// absolute path is the last line printed.
import { spawnSync } from 'node:child_process';
import { copyFileSync, existsSync, mkdirSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join, relative, resolve, sep } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const root = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const outDir = join(root, 'dist', 'calc', 'package');
const packDir = join(root, 'dist');
const ENTRY = 'calc-package';
/** Bare specifiers the compiled package may import: its one dependency. */
const ALLOWED_BARE = /^zod(\/|$)/;

const rootPackage = JSON.parse(readFileSync(join(root, 'package.json'), 'utf8'));

function run(command, args, options = {}) {
  const result = spawnSync(command, args, { cwd: root, encoding: 'utf8', ...options });
  if (result.status !== 0) {
    process.stderr.write(result.stdout ?? '');
    process.stderr.write(result.stderr ?? '');
    throw new Error(`${command} ${args.join(' ')} failed with status ${result.status}`);
  }
  return result.stdout;
}

function filesUnder(dir) {
  return readdirSync(dir, { withFileTypes: true }).flatMap((e) => (e.isDirectory() ? filesUnder(join(dir, e.name)) : [join(dir, e.name)]));
}

// 1. Compile shared/ from the package's entry: .ts specifiers become .js in the JavaScript.
rmSync(outDir, { recursive: true, force: true });
const tsc = join(dirname(createRequire(import.meta.url).resolve('typescript/package.json')), 'bin', 'tsc');
run(process.execPath, [tsc, '-p', join(root, 'packages', 'calc', 'tsconfig.json'), '--outDir', outDir]);

// 2. fft.js (MIT) is vendored rather than depended on: the package's only dependency stays zod.
const fftDir = dirname(createRequire(import.meta.url).resolve('fft.js/package.json'));
mkdirSync(join(outDir, 'vendor'), { recursive: true });
copyFileSync(join(fftDir, 'lib', 'fft.js'), join(outDir, 'vendor', 'fft.cjs'));
const fftReadme = readFileSync(join(fftDir, 'README.md'), 'utf8');
const fftLicense = fftReadme.slice(fftReadme.indexOf('This software is licensed under the MIT License.'));
writeFileSync(join(outDir, 'vendor', 'fft.LICENSE.txt'), `vendor/fft.cjs is lib/fft.js of fft.js ${JSON.parse(readFileSync(join(fftDir, 'package.json'), 'utf8')).version} (https://github.com/indutny/fft.js).\n\n${fftLicense}`);

// 3. Specifiers: fft.js to the vendored copy; declarations keep `.ts` on some relative imports, made `.js` here.
const IMPORT_SPECIFIER = /(\bfrom\s*|\bimport\s*\(\s*|\bimport\s+)(['"])([^'"]+)\2/g;
for (const file of filesUnder(outDir)) {
  if (!file.endsWith('.js') && !file.endsWith('.d.ts')) continue;
  const text = readFileSync(file, 'utf8');
  const rewritten = text.replace(IMPORT_SPECIFIER, (whole, lead, quote, spec) => {
    if (spec === 'fft.js') {
      const vendored = relative(dirname(file), join(outDir, 'vendor', 'fft.cjs')).split(sep).join('/');
      return `${lead}${quote}${vendored.startsWith('.') ? vendored : `./${vendored}`}${quote}`;
    }
    if (spec.startsWith('.') && spec.endsWith('.ts')) return `${lead}${quote}${spec.slice(0, -3)}.js${quote}`;
    return whole;
  });
  if (rewritten !== text) writeFileSync(file, rewritten);
  // Nothing may leave the package but zod, and every relative import must land on a file inside it.
  for (const [, , , spec] of rewritten.matchAll(IMPORT_SPECIFIER)) {
    if (spec.startsWith('.')) {
      const target = resolve(dirname(file), file.endsWith('.d.ts') ? spec.replace(/\.js$/, '.d.ts') : spec);
      if (!target.startsWith(outDir + sep) || !existsSync(target)) throw new Error(`${relative(outDir, file)} imports ${spec}, which is not in the package`);
    } else if (!ALLOWED_BARE.test(spec)) {
      throw new Error(`${relative(outDir, file)} imports '${spec}'; the package may depend on zod alone`);
    }
  }
}

// 4. The package's own package.json and README; its version is the app's.
const compiled = await import(pathToFileURL(join(outDir, `${ENTRY}.js`)).href);
if (compiled.VERSION !== rootPackage.version) {
  throw new Error(`shared/version.ts says ${compiled.VERSION} but package.json says ${rootPackage.version}; release both together`);
}
const calcPackage = {
  name: '@gammaline/calc',
  version: rootPackage.version,
  description: `Gammaline's feed-line calculations offline: the answers of POST /api/${compiled.API_VERSION}/batch items without a network.`,
  type: 'module',
  main: `./${ENTRY}.js`,
  types: `./${ENTRY}.d.ts`,
  exports: {
    '.': { types: `./${ENTRY}.d.ts`, default: `./${ENTRY}.js` },
    './package.json': './package.json',
  },
  sideEffects: false,
  engines: rootPackage.engines,
  dependencies: { zod: rootPackage.dependencies.zod },
};
writeFileSync(join(outDir, 'package.json'), `${JSON.stringify(calcPackage, null, 2)}\n`);
copyFileSync(join(root, 'packages', 'calc', 'README.md'), join(outDir, 'README.md'));

// 5. npm pack into dist/.
const packed = JSON.parse(run('npm', ['pack', '--json', '--ignore-scripts', '--pack-destination', packDir], { cwd: outDir }));
const tarball = join(packDir, packed[0].filename);
console.log(`@gammaline/calc ${calcPackage.version}: ${packed[0].entryCount} files, ${packed[0].size} bytes packed`);
console.log(tarball);
