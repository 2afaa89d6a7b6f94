/**
 * Input that no physical situation matches (an SWR below 1, more reflected than forward power,
 * a negative resistance...). `field` is the dotted path of the offending value in the HTTP request
 * body, so the server can map it to a 422 problem response with a field-level message.
 * @example throw new RfInputError('swr', 'SWR cannot be below 1; a perfect match reads 1.');
 */
export class RfInputError extends Error {
  readonly field: string;

  constructor(field: string, message: string) {
    super(message);
    this.name = 'RfInputError';
    this.field = field;
  }
}
