import { mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { openApiDocument } from './document.ts';

/** `npm run openapi`: writes the committed copy that the drift test compares against. */
export const OPENAPI_FILE = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../openapi/openapi.json');

export function serializeOpenApi(): string {
  return `${JSON.stringify(openApiDocument(), null, 2)}\n`;
}

if (process.argv[1] && path.resolve(process.argv[1]) === fileURLToPath(import.meta.url)) {
  mkdirSync(path.dirname(OPENAPI_FILE), { recursive: true });
  writeFileSync(OPENAPI_FILE, serializeOpenApi());
  console.log(`wrote ${path.relative(process.cwd(), OPENAPI_FILE)}`);
}
