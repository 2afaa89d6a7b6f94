import { OpenApiGeneratorV31 } from '@asteasolutions/zod-to-openapi';
import { APP_VERSION } from '../config.ts';
import { registry } from './registry.ts';
// Imported for their side effect: every route module registers its paths on the shared registry.
import '../api/health.routes.ts';
import '../api/v1/router.ts';

let cached: ReturnType<OpenApiGeneratorV31['generateDocument']> | undefined;

/** The OpenAPI 3.1 document, generated from the same zod schemas that validate requests. */
export function openApiDocument() {
  cached ??= new OpenApiGeneratorV31(registry.definitions).generateDocument({
    openapi: '3.1.0',
    info: {
      title: 'Gammaline API',
      version: APP_VERSION,
      description:
        'Feed-line mismatch arithmetic: SWR, return loss, reflection, lossy lines and referral of readings between the two ends of a line. ' +
        'SI units with the unit in the field name; complex values as `{ re, im }`; unbounded results (SWR of a total reflection, return loss of a perfect match) are `null`. ' +
        'Errors are RFC 9457 problem details.',
    },
    servers: [{ url: '/' }],
  });
  return cached;
}
