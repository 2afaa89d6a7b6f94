export * from './errors.ts';
export * from './points.ts';
export * from './touchstone.ts';
export * from './csv.ts';
export * from './analyse.ts';
export * from './move.ts';
export * from './fault-distance.ts';
