// The words of the e-mails Starkiln sends. Plain text first; the HTML part says the same thing.
import type { MailMessage } from './mail';
import type { CampaignRole } from '../contracts/vocabulary';

function escapeHtml(s: string): string {
  return s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
}

function listRoles(roles: CampaignRole[]): string {
  if (roles.length === 1) return roles[0];
  return `${roles.slice(0, -1).join(', ')} and ${roles[roles.length - 1]}`;
}

export function invitationMail(input: {
  to: string;
  inviterName: string;
  campaignName: string;
  roles: CampaignRole[];
  baseUrl: string;
  token: string;
  expiresAt: Date;
}): MailMessage {
  const link = `${input.baseUrl}/sign-up?invite=${encodeURIComponent(input.token)}`;
  const roles = listRoles(input.roles);
  const until = input.expiresAt.toISOString().slice(0, 10);
  const text = [
    `${input.inviterName} invited you to the campaign "${input.campaignName}" on Starkiln as ${roles}.`,
    '',
    `Create your account here (the link works until ${until}):`,
    link,
    '',
    'If you did not expect this, ignore this message; nothing happens until the link is used.',
  ].join('\n');
  const html = `<p>${escapeHtml(input.inviterName)} invited you to the campaign <strong>${escapeHtml(input.campaignName)}</strong> on Starkiln as ${escapeHtml(roles)}.</p>
<p><a href="${escapeHtml(link)}">Create your account</a> (the link works until ${until}).</p>
<p>If you did not expect this, ignore this message; nothing happens until the link is used.</p>`;
  return { kind: 'invitation', to: input.to, subject: `Invitation to "${input.campaignName}" on Starkiln`, text, html };
}

export function passwordResetMail(input: { to: string; name: string; baseUrl: string; token: string }): MailMessage {
  const link = `${input.baseUrl}/reset-password?token=${encodeURIComponent(input.token)}`;
  const text = [
    `Hello ${input.name},`,
    '',
    'Someone asked to reset the password of your Starkiln account. Choose a new one here (the link works for one hour):',
    link,
    '',
    'If it was not you, ignore this message: your password stays as it is.',
  ].join('\n');
  const html = `<p>Hello ${escapeHtml(input.name)},</p>
<p>Someone asked to reset the password of your Starkiln account. <a href="${escapeHtml(link)}">Choose a new one</a> (the link works for one hour).</p>
<p>If it was not you, ignore this message: your password stays as it is.</p>`;
  return { kind: 'password-reset', to: input.to, subject: 'Reset your Starkiln password', text, html };
}

/** To each reviewer of a campaign when a batch finishes with fits waiting for review. */
export function reviewNoticeMail(input: {
  to: string;
  name: string;
  campaignName: string;
  batchId: string;
  waitingInBatch: number;
  waitingInCampaign: number;
  link: string;
}): MailMessage {
  const fits = (n: number) => `${n} fit${n === 1 ? '' : 's'}`;
  const more = input.waitingInCampaign > input.waitingInBatch ? ` (${fits(input.waitingInCampaign)} in the campaign altogether)` : '';
  const text = [
    `Hello ${input.name},`,
    '',
    `Batch ${input.batchId} in "${input.campaignName}" has finished and ${fits(input.waitingInBatch)} wait for your review${more}.`,
    '',
    'Open the review desk:',
    input.link,
  ].join('\n');
  const html = `<p>Hello ${escapeHtml(input.name)},</p>
<p>Batch ${escapeHtml(input.batchId)} in <strong>${escapeHtml(input.campaignName)}</strong> has finished and ${fits(input.waitingInBatch)} wait for your review${escapeHtml(more)}.</p>
<p><a href="${escapeHtml(input.link)}">Open the review desk</a></p>`;
  return { kind: 'review-notice', to: input.to, subject: `${fits(input.waitingInBatch)} to review in "${input.campaignName}"`, text, html };
}
