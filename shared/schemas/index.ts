export * from './common.ts';
export * from './calc.ts';
