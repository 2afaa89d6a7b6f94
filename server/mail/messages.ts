import type { OutgoingMail } from './mailer.ts';

/** Wording of every message Gammaline sends; plain text, one place to read and change. */

const MONTHS = ['January', 'February', 'March', 'April', 'May', 'June', 'July', 'August', 'September', 'October', 'November', 'December'];

/**
 * A moment as people read it in a letter, in UTC because the server does not know the reader's
 * zone: "11 December 2026, 16:30 UTC".
 * @example plainUtc(new Date('2026-12-11T16:30:00Z')) // '11 December 2026, 16:30 UTC'
 */
export function plainUtc(at: Date): string {
  const two = (n: number) => String(n).padStart(2, '0');
  return `${at.getUTCDate()} ${MONTHS[at.getUTCMonth()]} ${at.getUTCFullYear()}, ${two(at.getUTCHours())}:${two(at.getUTCMinutes())} UTC`;
}

export function invitationMail(p: { to: string; organisationId: string; organisationName: string; invitedBy: string; role: string; link: string; expiresAt: Date }): OutgoingMail {
  return {
    to: p.to,
    organisationId: p.organisationId,
    subject: `You are invited to ${p.organisationName} on Gammaline`,
    text: [
      `${p.invitedBy} invites you to join ${p.organisationName} on Gammaline as ${p.role === 'admin' ? 'an admin' : 'a developer'}.`,
      '',
      'Choose your name and password here:',
      p.link,
      '',
      `The link works once and until ${plainUtc(p.expiresAt)}.`,
      'If you did not expect this, ignore this message.',
    ].join('\n'),
  };
}

export function passwordResetMail(p: { to: string; organisationId: string; link: string; expiresAt: Date }): OutgoingMail {
  return {
    to: p.to,
    organisationId: p.organisationId,
    subject: 'Choose a new Gammaline password',
    text: [
      'Someone (hopefully you) asked to choose a new password for this address on Gammaline.',
      '',
      'Choose it here:',
      p.link,
      '',
      `The link works once and until ${plainUtc(p.expiresAt)}. Your current password keeps working until you choose a new one.`,
      'If you did not ask for this, ignore this message.',
    ].join('\n'),
  };
}

export function quotaWarningMail(p: { to: string; organisationId: string; keyName: string; displayStart: string; used: number; quota: number; threshold: 80 | 100; day: string }): OutgoingMail {
  const reached = p.threshold === 100;
  return {
    to: p.to,
    organisationId: p.organisationId,
    subject: reached
      ? `Gammaline key "${p.keyName}" has used its whole daily quota`
      : `Gammaline key "${p.keyName}" has used ${p.threshold} % of its daily quota`,
    text: [
      `Your key "${p.keyName}" (${p.displayStart}…) has spent ${p.used} of its ${p.quota} calculation units for ${p.day} (UTC).`,
      reached
        ? 'Further calculations with this key are refused (HTTP 429) until midnight UTC.'
        : 'When the quota is spent, calculations with this key are refused (HTTP 429) until midnight UTC.',
      'An admin of your organisation can raise the quota.',
    ].join('\n'),
  };
}
