import { simpleParser } from 'mailparser';
import type { Logger } from 'pino';
import { SMTPServer } from 'smtp-server';
import type { Database } from '../db/client.ts';
import { capturedMail } from '../db/schema.ts';
import { ORGANISATION_HEADER } from './mailer.ts';

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

/** Largest message the capture server accepts; our own messages are a few kilobytes. */
const MAX_MESSAGE_BYTES = 1024 * 1024;

export interface MailCapture {
  /** `smtp://127.0.0.1:<port>`, for `createMailer`. */
  url: string;
  port: number;
  close(): Promise<void>;
}

/**
 * Local mode only: an SMTP server on 127.0.0.1 (free port) that stores every message in
 * `captured_mail`, so invitations and resets can be followed without a real mail server.
 * It answers the client only after the row is committed, so a sent message is readable at once.
 */
export async function startMailCapture(options: { database: Database; logger: Logger }): Promise<MailCapture> {
  const { database, logger } = options;
  const server = new SMTPServer({
    authOptional: true,
    disabledCommands: ['STARTTLS', 'AUTH'],
    size: MAX_MESSAGE_BYTES,
    logger: false,
    onData(stream, session, callback) {
      const chunks: Buffer[] = [];
      stream.on('data', (chunk: Buffer) => chunks.push(chunk));
      stream.on('error', callback);
      stream.on('end', () => {
        const raw = Buffer.concat(chunks);
        void (async () => {
          const parsed = await simpleParser(raw);
          const from = session.envelope.mailFrom;
          const owner = parsed.headers.get(ORGANISATION_HEADER.toLowerCase());
          await database.db.insert(capturedMail).values({
            envelopeFrom: from ? from.address : '',
            envelopeTo: session.envelope.rcptTo.map((r) => r.address),
            subject: parsed.subject ?? '',
            textBody: parsed.text ?? '',
            raw: raw.toString('utf8'),
            // A message without a (valid) owner is shown to nobody: better hidden than shown to the wrong admins.
            organisationId: typeof owner === 'string' && UUID.test(owner.trim()) ? owner.trim() : null,
          });
        })().then(
          () => callback(),
          (err: unknown) => {
            logger.error({ err }, 'could not store a captured message');
            callback(new Error('message could not be stored'));
          },
        );
      });
    },
  });
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject);
    server.listen(0, '127.0.0.1', () => resolve());
  });
  server.on('error', (err) => logger.error({ err }, 'mail capture server error'));
  const address = server.server.address();
  const port = typeof address === 'object' && address ? address.port : 0;
  logger.info({ port }, 'capturing outgoing mail in PostgreSQL (local mode)');
  return {
    url: `smtp://127.0.0.1:${port}`,
    port,
    close: () => new Promise<void>((resolve) => server.close(() => resolve())),
  };
}
