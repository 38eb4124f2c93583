/** The text of every e-mail Pewter sends: a plain-text body and a simple HTML twin. */
import type { MailMessage } from './mailer'

/** "2026-03-14 09:30": the minute, in UTC, a link stops working. */
const utcMinute = (d: Date) => d.toISOString().replace('T', ' ').slice(0, 16)

const esc = (s: string) => s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!)

function compose(to: string, subject: string, paragraphs: string[], link?: { href: string; label: string }): MailMessage {
  const text = [...paragraphs, ...(link ? [`${link.label}: ${link.href}`] : []), '— Pewter'].join('\n\n')
  const html = [
    ...paragraphs.map((p) => `<p>${esc(p)}</p>`),
    ...(link ? [`<p><a href="${esc(link.href)}">${esc(link.label)}</a></p><p style="color:#666;font-size:12px">${esc(link.href)}</p>`] : []),
    '<p style="color:#666">— Pewter</p>',
  ].join('\n')
  return { to, subject, text, html }
}

export function invitationMail(o: { to: string; workspace: string; role: string; inviter: string; link: string; expiresAt: Date }): MailMessage {
  return compose(o.to, `You are invited to ${o.workspace} on Pewter`, [
    `${o.inviter} invites you to join the workspace "${o.workspace}" as ${o.role}.`,
    `The invitation is valid until ${utcMinute(o.expiresAt)} UTC and can be used once.`,
  ], { href: o.link, label: 'Accept the invitation' })
}

export function passwordResetMail(o: { to: string; link: string; expiresAt: Date }): MailMessage {
  return compose(o.to, 'Reset your Pewter password', [
    'Someone (hopefully you) asked to reset the password of your Pewter account.',
    `The link below works once, until ${utcMinute(o.expiresAt)} UTC. If you did not ask for it, ignore this message: your password stays as it is.`,
    'Choosing a new password signs the account out everywhere and revokes all of its API tokens: create new tokens afterwards for the command line and automation.',
  ], { href: o.link, label: 'Choose a new password' })
}

export function verifyEmailMail(o: { to: string; link: string; expiresAt: Date; signup: boolean }): MailMessage {
  return compose(o.to, 'Confirm your e-mail address for Pewter', o.signup
    ? [
        'Someone (hopefully you) asked to create a Pewter account with this e-mail address.',
        `Follow the link below and enter the password chosen at sign-up to create the account. The link works once, until ${utcMinute(o.expiresAt)} UTC. If you did not sign up, ignore this message: no account is created.`,
      ]
    : [
        'Confirm that this e-mail address belongs to your Pewter account.',
        `The link below works once, until ${utcMinute(o.expiresAt)} UTC. Until the address is confirmed, the account cannot join workspaces by invitation.`,
      ], { href: o.link, label: 'Confirm the address' })
}

export function accountExistsMail(o: { to: string; signInLink: string; resetLink: string }): MailMessage {
  return compose(o.to, 'Someone tried to create a Pewter account with your address', [
    'Someone (perhaps you) asked to create a Pewter account with this e-mail address, which already has one. No new account was made and nothing changed.',
    `If it was you, sign in instead (${o.signInLink}); if you forgot the password, ask for a new one.`,
  ], { href: o.resetLink, label: 'Reset the password' })
}

export function fitSettledMail(o: { to: string; runId: number; status: string; outcome?: string | null; project: string; model: string; error?: string | null; link: string }): MailMessage {
  const done = o.status === 'succeeded'
  return compose(o.to, done ? `Your fit #${o.runId} finished` : `Your fit #${o.runId} failed`, [
    done
      ? `The fit #${o.runId} of ${o.model} in project "${o.project}" finished${o.outcome ? `; the optimiser's outcome: ${o.outcome}` : ''}.`
      : `The fit #${o.runId} of ${o.model} in project "${o.project}" failed${o.error ? `: ${o.error}` : '.'}`,
    ...(done ? ['A fitted model holds only within the range of the data it was fitted to; verify it before using it for control, protection or safety decisions.'] : []),
    'You get these messages because "e-mail me when my fits end" is on in your settings.',
  ], { href: o.link, label: 'Open the run' })
}

export function modelForkedMail(o: { to: string; model: string; fork: string; workspace: string; by: string; link: string }): MailMessage {
  return compose(o.to, `Your model ${o.model} was forked`, [
    `${o.by} forked your model "${o.model}" as "${o.fork}" in the workspace "${o.workspace}".`,
  ], { href: o.link, label: 'Open the fork' })
}

export function reviewRequestedMail(o: { to: string; model: string; version: number; workspace: string; by: string; comment: string; link: string }): MailMessage {
  return compose(o.to, `Review requested: ${o.model} version ${o.version}`, [
    `${o.by} asks for a review of version ${o.version} of "${o.model}" in the workspace "${o.workspace}".`,
    ...(o.comment ? [`Their comment: ${o.comment}`] : []),
    'Approve it with a comment, or request changes saying what should change. You get this message as a reviewer of the workspace.',
  ], { href: o.link, label: 'Open the version' })
}

export function changesRequestedMail(o: { to: string; model: string; version: number; by: string; comment: string; link: string }): MailMessage {
  return compose(o.to, `Changes requested: ${o.model} version ${o.version}`, [
    `${o.by} reviewed version ${o.version} of "${o.model}" and asks for changes before approving it:`,
    o.comment,
  ], { href: o.link, label: 'Open the model' })
}
