import type { RequestHandler } from 'express';
import multer from 'multer';
import { z } from 'zod';
import { checkSweepOptions, sweepOptionFields } from '../../../../shared/schemas/sweeps.ts';
import { ApiError } from '../../../http/problem.ts';

/** Largest sweep file accepted: a 100,000-point Touchstone file is about 5 MB. */
export const MAX_SWEEP_FILE_BYTES = 8 * 1024 * 1024;
const MAX_FIELD_BYTES = 256 * 1024;
/** Largest multipart body accepted: the file plus room for the option fields and part headers. */
export const MAX_SWEEP_UPLOAD_BYTES = MAX_SWEEP_FILE_BYTES + 1024 * 1024;

const upload = multer({
  storage: multer.memoryStorage(),
  limits: { fileSize: MAX_SWEEP_FILE_BYTES, files: 1, fields: 20, fieldSize: MAX_FIELD_BYTES, parts: 25 },
}).single('file');

const LIMIT_MESSAGES: Record<string, { kind: 'payloadTooLarge' | 'validation'; detail: string; field?: string }> = {
  LIMIT_FILE_SIZE: { kind: 'payloadTooLarge', field: 'file', detail: `The file is larger than ${MAX_SWEEP_FILE_BYTES / 1024 / 1024} MB; export fewer points or split the sweep.` },
  LIMIT_FILE_COUNT: { kind: 'validation', field: 'file', detail: 'Send one file per upload, in the field named "file".' },
  LIMIT_UNEXPECTED_FILE: { kind: 'validation', field: 'file', detail: 'Send the sweep file in the form field named "file".' },
  LIMIT_FIELD_VALUE: { kind: 'payloadTooLarge', detail: `A form field is longer than ${MAX_FIELD_BYTES / 1024} KB; line and mask JSON are far smaller than that.` },
  LIMIT_PART_COUNT: { kind: 'validation', detail: 'The form has too many parts; send the file and the option fields only.' },
  LIMIT_FIELD_COUNT: { kind: 'validation', detail: 'The form has too many fields; see the documented option fields.' },
};

/**
 * multer with its errors turned into problems a person can act on: a file over the limit is 413,
 * a wrong field name or a broken multipart body is 400.
 */
export const sweepUpload: RequestHandler = (req, res, next) => {
  upload(req, res, (err?: unknown) => {
    if (!err) {
      next();
      return;
    }
    if (err instanceof multer.MulterError) {
      const known = LIMIT_MESSAGES[err.code];
      if (known) {
        next(new ApiError(known.kind, known.detail, { errors: known.field ? [{ field: known.field, message: known.detail }] : undefined, cause: err }));
        return;
      }
      next(new ApiError('validation', `The form could not be read (${err.message}); send multipart/form-data with the file in the field "file".`, { cause: err }));
      return;
    }
    next(new ApiError('badRequest', 'The multipart body could not be read; check the boundary and that the upload was complete.', { cause: err }));
  });
};

function formNumber(field: string) {
  return (v: unknown, ctx: z.RefinementCtx) => {
    if (typeof v !== 'string') return v;
    const t = v.trim();
    if (t === '') return undefined;
    const n = Number(t);
    if (!Number.isFinite(n)) {
      ctx.addIssue({ code: 'invalid_type', expected: 'number', input: t, message: `${field} must be a number such as 50, not "${t.slice(0, 40)}"` });
      return z.NEVER;
    }
    return n;
  };
}

function formJson(field: string, example: string) {
  return (v: unknown, ctx: z.RefinementCtx) => {
    if (typeof v !== 'string') return v;
    const t = v.trim();
    if (t === '') return undefined;
    try {
      return JSON.parse(t) as unknown;
    } catch {
      ctx.addIssue({ code: 'invalid_format', format: 'json', input: t, message: `${field} must be JSON text, for example ${example}` });
      return z.NEVER;
    }
  };
}

const blankToUndefined = (v: unknown) => (typeof v === 'string' && v.trim() === '' ? undefined : v);

/** The option fields of a multipart upload: text, converted to the types of the JSON form. */
export const SweepFormFieldsSchema = z
  .strictObject({
    format: z.preprocess(blankToUndefined, z.enum(['touchstone', 'csv']).optional()),
    name: z.preprocess(blankToUndefined, sweepOptionFields.name),
    referenceOhm: z.preprocess(formNumber('referenceOhm'), sweepOptionFields.referenceOhm),
    thresholdSwr: z.preprocess(formNumber('thresholdSwr'), sweepOptionFields.thresholdSwr),
    line: z.preprocess(formJson('line', '{"cableId":"rg-213","lengthM":28}'), sweepOptionFields.line),
    feedlineId: z.preprocess(blankToUndefined, sweepOptionFields.feedlineId),
    direction: z.preprocess(blankToUndefined, sweepOptionFields.direction),
    mask: z.preprocess(formJson('mask', '{"maxSwr":1.5}'), sweepOptionFields.mask),
  })
  .superRefine(checkSweepOptions);
