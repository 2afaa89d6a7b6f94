/**
 * A batch item is computed by shared/calculations/calculate.ts, the same function the offline package
 * @gammaline/calc runs, so an item answers alike online and offline by construction:
 * `runItem(item, prefix, cables, logger)` answers `{ ok, output | problem }` and never throws.
 */
export { calculateItem as runItem, type ItemOutcome } from '../../../../shared/calculations/calculate.ts';
