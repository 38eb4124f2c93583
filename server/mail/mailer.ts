/**
 * Outgoing e-mail over SMTP (nodemailer). SMTP_URL names the relay in deployment; `npm start` runs a
 * local fake SMTP server (fake-smtp.ts) and points SMTP_URL at it. A failed delivery is logged and
 * reported to the caller as `false`: no request fails because a mail relay is down.
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

export function createMailer(config: Pick<Config, 'smtpUrl' | 'mailFrom' | 'fakeSmtpPort'>, log: (m: string) => void = (m) => console.error(`[pewter] ${m}`)): Mailer {
  const url = config.smtpUrl ?? `smtp://127.0.0.1:${config.fakeSmtpPort}`
  const transport = nodemailer.createTransport(url)
  return {
    async send(message) {
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
