/**
 * A local fake SMTP server for development and tests (smtp-server + mailparser): it accepts every
 * message on 127.0.0.1 and stores it in the `mailbox` table, which admins read on the Mailbox page.
 * It never relays anything anywhere.
 */
import { SMTPServer } from 'smtp-server'
import { simpleParser, type AddressObject } from 'mailparser'
import { openDatabase, type Database } from '../db/client'
import { mailbox } from '../db/schema'

export interface FakeSmtp {
  port: number
  url: string
  close: () => Promise<void>
}

const addresses = (a: AddressObject | AddressObject[] | undefined) =>
  (Array.isArray(a) ? a : a ? [a] : []).map((x) => x.text).join(', ')

/** Listens on 127.0.0.1:port (0 = any free port) and stores what arrives in the database at `databaseUrl`. */
export async function startFakeSmtp(opts: { databaseUrl: string; port?: number; log?: (m: string) => void }): Promise<FakeSmtp> {
  const database: Database = openDatabase(opts.databaseUrl, 2)
  const server = new SMTPServer({
    authOptional: true,
    disabledCommands: ['AUTH', 'STARTTLS'],
    disableReverseLookup: true,
    logger: false,
    size: 5 * 1024 * 1024,
    onData(stream, session, callback) {
      simpleParser(stream)
        .then(async (mail) => {
          const envelopeTo = session.envelope.rcptTo.map((r) => r.address).join(', ')
          await database.db.insert(mailbox).values({
            from: addresses(mail.from) || (session.envelope.mailFrom ? session.envelope.mailFrom.address : ''),
            to: addresses(mail.to) || envelopeTo,
            subject: mail.subject ?? '',
            text: mail.text ?? '',
            html: typeof mail.html === 'string' ? mail.html : null,
          })
          opts.log?.(`captured "${mail.subject ?? ''}" for ${envelopeTo}`)
          callback()
        })
        .catch((err: Error) => callback(err))
    },
  })
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject)
    server.listen(opts.port ?? 0, '127.0.0.1', () => { server.off('error', reject); resolve() })
  })
  const address = server.server.address()
  const port = typeof address === 'object' && address ? address.port : 0
  return {
    port,
    url: `smtp://127.0.0.1:${port}`,
    close: async () => {
      await new Promise<void>((resolve) => server.close(() => resolve()))
      await database.close()
    },
  }
}
