/**
 * Thrown for input that is well-formed but cannot be computed (SWR below 1, reflected power above
 * forward, a negative length...). `field` is the dotted path of the offending request field.
 * @example throw new RfInputError('swr', 'must be at least 1 (1 is a perfect match)')
 */
export class RfInputError extends Error {
  readonly field: string;

  constructor(field: string, message: string) {
    super(message);
    this.name = 'RfInputError';
    this.field = field;
  }
}
