import { z } from 'zod';

/** Environment variables the server reads; README's configuration table mirrors this schema. */
export const EnvSchema = z.object({
  NODE_ENV: z.enum(['development', 'test', 'production']).default('development'),
  HOST: z.string().min(1).default('127.0.0.1'),
  PORT: z.coerce.number().int().min(0).max(65535).default(8080),
  DATABASE_URL: z.string().regex(/^postgres(ql)?:\/\//, 'DATABASE_URL must be a postgres:// URL'),
  LOG_LEVEL: z.enum(['fatal', 'error', 'warn', 'info', 'debug', 'trace', 'silent']).default('info'),
  DEMO_ADMIN_EMAIL: z.email().default('admin@kestrel-ridge.example'),
  DEMO_ADMIN_PASSWORD: z.string().min(8).default('gammaline-demo-2026'),
  BODY_LIMIT: z.string().default('2mb'),
  PUBLIC_URL: z.url().optional(),
  WEB_DIST: z.string().default('web/dist'),
});

export type Env = z.infer<typeof EnvSchema>;

export interface AppConfig {
  /** `local` seeds demo data and exposes local-only helpers; `production` never does. */
  mode: 'local' | 'production';
  host: string;
  port: number;
  databaseUrl: string;
  logLevel: Env['LOG_LEVEL'];
  demoAdmin: { email: string; password: string };
  bodyLimit: string;
  publicUrl: string;
  webDist: string;
  version: string;
}

export const APP_VERSION = '0.1.0';

/** Parses the process environment; throws a readable list of what is wrong. */
export function loadConfig(env: NodeJS.ProcessEnv = process.env): AppConfig {
  const parsed = EnvSchema.safeParse(env);
  if (!parsed.success) {
    const lines = parsed.error.issues.map((i) => `  ${i.path.join('.') || '(env)'}: ${i.message}`);
    throw new Error(`Invalid environment:\n${lines.join('\n')}`);
  }
  const e = parsed.data;
  return {
    mode: e.NODE_ENV === 'production' ? 'production' : 'local',
    host: e.HOST,
    port: e.PORT,
    databaseUrl: e.DATABASE_URL,
    logLevel: e.LOG_LEVEL,
    demoAdmin: { email: e.DEMO_ADMIN_EMAIL, password: e.DEMO_ADMIN_PASSWORD },
    bodyLimit: e.BODY_LIMIT,
    publicUrl: e.PUBLIC_URL ?? `http://${e.HOST}:${e.PORT}`,
    webDist: e.WEB_DIST,
    version: APP_VERSION,
  };
}

/** A config for tests and tools that build an app without reading the environment. */
export function testConfig(overrides: Partial<AppConfig> = {}): AppConfig {
  return {
    mode: 'local',
    host: '127.0.0.1',
    port: 0,
    databaseUrl: process.env.DATABASE_URL ?? 'postgres://postgres@127.0.0.1:5432/gammaline',
    logLevel: 'silent',
    demoAdmin: { email: 'admin@kestrel-ridge.example', password: 'gammaline-demo-2026' },
    bodyLimit: '2mb',
    publicUrl: 'http://127.0.0.1',
    webDist: 'web/dist',
    version: APP_VERSION,
    ...overrides,
  };
}
