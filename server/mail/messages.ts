import type { OutgoingMail } from './mailer.ts';

/** Wording of every message Gammaline sends; plain text, one place to read and change. */

const MONTHS = ['January', 'February', 'March', 'April', 'May', 'June', 'July', 'August', 'September', 'October', 'November', 'December'];

/**
 * A moment as people read it in a letter, in UTC because the server does not know the reader's
 * zone: "11 December 2026, 16:30 UTC".
 * @example plainUtc(new Date('2026-12-11T16:30:00Z')) // '11 December 2026, 16:30 UTC'
 */
export function plainUtc(at: Date): string {
  const twoDigits = (value: number) => String(value).padStart(2, '0');
  return `${at.getUTCDate()} ${MONTHS[at.getUTCMonth()]} ${at.getUTCFullYear()}, ${twoDigits(at.getUTCHours())}:${twoDigits(at.getUTCMinutes())} UTC`;
}

/**
 * The invitation letter. An address that already signs in to Gammaline (in another organisation) is
 * told to accept signed in, which moves that account; the admin who invited never learns which letter went out.
 */
export function invitationMail(invitation: {
  to: string;
  organisationId: string;
  organisationName: string;
  invitedBy: string;
  role: string;
  link: string;
  expiresAt: Date;
  hasAccount: boolean;
}): OutgoingMail {
  const how = invitation.hasAccount
    ? [
        'You already have a Gammaline account with this address, in another organisation. To accept, sign in to Gammaline with that account first, then open this link and accept:',
        invitation.link,
        '',
        `Accepting moves your account to ${invitation.organisationName}: you keep your name and password, your API keys in your current organisation are revoked, and the sweeps and feed lines you saved there stay with that organisation. If you are its only admin, make another member an admin there first.`,
      ]
    : ['Choose your name and password here:', invitation.link];
  return {
    to: invitation.to,
    organisationId: invitation.organisationId,
    subject: `You are invited to ${invitation.organisationName} on Gammaline`,
    text: [
      `${invitation.invitedBy} invites you to join ${invitation.organisationName} on Gammaline as ${invitation.role === 'admin' ? 'an admin' : 'a developer'}.`,
      '',
      ...how,
      '',
      `The link works once and until ${plainUtc(invitation.expiresAt)}.`,
      'If you did not expect this, ignore this message.',
    ].join('\n'),
  };
}

export function passwordResetMail(reset: { to: string; organisationId: string; link: string; expiresAt: Date }): OutgoingMail {
  return {
    to: reset.to,
    organisationId: reset.organisationId,
    subject: 'Choose a new Gammaline password',
    text: [
      'Someone (hopefully you) asked to choose a new password for this address on Gammaline.',
      '',
      'Choose it here:',
      reset.link,
      '',
      `The link works once and until ${plainUtc(reset.expiresAt)}. Your current password keeps working until you choose a new one.`,
      'If you did not ask for this, ignore this message.',
    ].join('\n'),
  };
}

export function quotaWarningMail(warning: { to: string; organisationId: string; keyName: string; displayStart: string; used: number; quota: number; threshold: 80 | 100; day: string }): OutgoingMail {
  const reached = warning.threshold === 100;
  return {
    to: warning.to,
    organisationId: warning.organisationId,
    subject: reached
      ? `Gammaline key "${warning.keyName}" has used its whole daily quota`
      : `Gammaline key "${warning.keyName}" has used ${warning.threshold} % of its daily quota`,
    text: [
      `Your key "${warning.keyName}" (${warning.displayStart}…) has spent ${warning.used} of its ${warning.quota} calculation units for ${warning.day} (UTC).`,
      reached
        ? 'Further calculations with this key are refused (HTTP 429) until midnight UTC.'
        : 'When the quota is spent, calculations with this key are refused (HTTP 429) until midnight UTC.',
      'An admin of your organisation can raise the quota.',
    ].join('\n'),
  };
}
