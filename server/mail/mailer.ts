import nodemailer, { type Transporter } from 'nodemailer';
import type { Logger } from 'pino';

export interface OutgoingMail {
  to: string;
  subject: string;
  text: string;
  /** The organisation the message is sent for; travels as ORGANISATION_HEADER so local capture can show it to that organisation's admins only. */
  organisationId?: string;
}

/** Header naming the organisation a message belongs to (read by the local capture server). */
export const ORGANISATION_HEADER = 'X-Gammaline-Organisation';

/** Sends the few messages Gammaline writes (invitations, password resets, quota warnings). */
export interface Mailer {
  send(mail: OutgoingMail): Promise<void>;
  close(): void;
}

/**
 * A nodemailer transport to `url`. The local capture server offers no TLS, so for a loopback
 * `smtp://` URL we do not try STARTTLS; a real server gets nodemailer's defaults.
 */
export function createMailer(options: { url: string; from: string; logger: Logger }): Mailer {
  const url = new URL(options.url);
  const loopback = url.protocol === 'smtp:' && (url.hostname === '127.0.0.1' || url.hostname === 'localhost');
  const transport: Transporter = loopback
    ? nodemailer.createTransport({ host: url.hostname, port: Number(url.port), secure: false, ignoreTLS: true })
    : nodemailer.createTransport(options.url);
  return {
    async send(mail) {
      const headers = mail.organisationId ? { [ORGANISATION_HEADER]: mail.organisationId } : undefined;
      await transport.sendMail({ from: options.from, to: mail.to, subject: mail.subject, text: mail.text, headers });
      options.logger.info({ to: mail.to, subject: mail.subject }, 'mail sent');
    },
    close() {
      transport.close();
    },
  };
}

/** For apps built without mail (tools, some tests): logs what would have been sent. */
export function createLogOnlyMailer(logger: Logger): Mailer {
  return {
    async send(mail) {
      logger.warn({ to: mail.to, subject: mail.subject }, 'no mail transport configured; message dropped');
    },
    close() {},
  };
}
