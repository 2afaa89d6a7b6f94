/**
 * A sweep file (Touchstone or CSV) that cannot be read. `line` is the 1-based physical line of the
 * file where reading stopped and `reason` says what is wrong there and how to fix it, so the server
 * can answer a 400 problem that points a person at the exact line. Physics problems with values that
 * were read correctly (a mask outside the sweep, a line that cannot explain the data) are
 * `RfInputError`s from `shared/rf/errors.ts` instead, because they are about request fields.
 * @example throw new SweepFormatError(12, 'the frequency 7.1 MHz is not above the previous one; frequencies must increase');
 */
export class SweepFormatError extends Error {
  readonly line: number;
  readonly reason: string;

  constructor(line: number, reason: string) {
    super(`Line ${line}: ${reason}`);
    this.name = 'SweepFormatError';
    this.line = line;
    this.reason = reason;
  }
}
