import { gzipSync } from 'node:zlib';
import type { Plugin, ResolvedConfig } from 'vite';

/**
 * Reports the JavaScript a browser must fetch before the console can start: the entry chunk and
 * everything it imports statically, gzip-compressed as a server would send it. Lazy chunks (views,
 * charts, the dark theme) are left out. Warns when the total is above the budget.
 */
export function initialJsReport(budgetKb: number): Plugin {
  let config: ResolvedConfig;
  return {
    name: 'gammaline:initial-js-report',
    apply: 'build',
    configResolved(resolved) {
      config = resolved;
    },
    generateBundle(_options, bundle) {
      const chunks = new Map<string, { code: string; imports: string[]; isEntry: boolean }>();
      for (const item of Object.values(bundle)) {
        if (item.type === 'chunk') chunks.set(item.fileName, { code: item.code, imports: item.imports, isEntry: item.isEntry });
      }
      const initial = new Set<string>();
      const visit = (fileName: string): void => {
        if (initial.has(fileName)) return;
        const chunk = chunks.get(fileName);
        if (!chunk) return;
        initial.add(fileName);
        chunk.imports.forEach(visit);
      };
      for (const [fileName, chunk] of chunks) if (chunk.isEntry) visit(fileName);

      let total = 0;
      const lines: string[] = [];
      for (const fileName of initial) {
        const size = gzipSync(chunks.get(fileName)!.code, { level: 9 }).length;
        total += size;
        lines.push(`  ${fileName.padEnd(44)} ${(size / 1024).toFixed(1).padStart(7)} kB gzip`);
      }
      const summary = `initial JS (entry + static imports): ${(total / 1024).toFixed(1)} kB gzip, budget ${budgetKb} kB`;
      if (total > budgetKb * 1024) {
        config.logger.warn(`\n[gammaline] ${summary} — OVER BUDGET\n${lines.join('\n')}`);
      } else {
        config.logger.info(`\n[gammaline] ${summary}\n${lines.join('\n')}`);
      }
    },
  };
}
