/**
 * Outgoing e-mail over SMTP (nodemailer). SMTP_URL names the relay in deployment; `npm start` runs a
 * local fake SMTP server (fake-smtp.ts) and points SMTP_URL at it with a generated credential. A failed
 * delivery is logged and reported to the caller as `false`: no request fails because a mail relay is down.
 *
 * Without a real relay (`linksToLog`), every message's links are also printed to the server's log, so
 * the operator at the terminal can hand out a verification or reset link.
 */
import nodemailer from 'nodemailer'
import type { Config } from '../config'

export interface MailMessage {
  to: string
  subject: string
  text: string
  html?: string
}

export interface Mailer {
  send(message: MailMessage): Promise<boolean>
  close(): void
}

const LINK = /https?:\/\/[^\s<>"')]+/g

/** The lines the server prints for one message when no relay is configured. */
export function linkLogLines(message: MailMessage): string[] {
  const links = [...new Set(message.text.match(LINK) ?? [])]
  return links.length ? [`mail to ${message.to} ("${message.subject}"):`, ...links.map((l) => `  ${l}`)] : []
}

export function createMailer(
  config: Pick<Config, 'smtpUrl' | 'mailFrom' | 'fakeSmtpPort'> & { linksToLog?: boolean },
  log: (m: string) => void = (m) => console.error(`[pewter] ${m}`),
  print: (m: string) => void = (m) => console.log(`[pewter] ${m}`),
): Mailer {
  const url = config.smtpUrl ?? `smtp://127.0.0.1:${config.fakeSmtpPort}`
  const transport = nodemailer.createTransport(url)
  return {
    async send(message) {
      if (config.linksToLog) for (const line of linkLogLines(message)) print(line)
      try {
        await transport.sendMail({ from: config.mailFrom, ...message })
        return true
      } catch (err) {
        log(`e-mail to ${message.to} ("${message.subject}") was not delivered: ${err instanceof Error ? err.message : err}`)
        return false
      }
    },
    close() { transport.close() },
  }
}
