// All server and shared schema code imports `z` from here so that `.openapi()` is always available.
import { z } from 'zod';
import { extendZodWithOpenApi } from '@asteasolutions/zod-to-openapi';

extendZodWithOpenApi(z);
export { z };
