/** A local fake SMTP server (smtp-server) that keeps the last messages in memory for the dev mailbox. */
import { SMTPServer } from 'smtp-server';
import type { AddressInfo } from 'node:net';
import { simpleParser } from 'mailparser';

export interface CapturedMail {
  id: number;
  from: string;
  to: string[];
  subject: string;
  text: string;
  receivedAt: string;
}

const KEEP = 200;

/** Subject and plain text of a raw message, by mailparser (encoded words, folding, charsets, multipart). */
async function parseMessage(raw: Buffer): Promise<{ subject: string; text: string }> {
  const parsed = await simpleParser(raw, { skipHtmlToText: true, skipTextToHtml: true, skipTextLinks: true });
  return { subject: parsed.subject ?? '', text: (parsed.text ?? '').trim() };
}

export class FakeSmtp {
  private server: SMTPServer;
  private nextId = 1;
  readonly messages: CapturedMail[] = [];

  constructor() {
    this.server = new SMTPServer({
      authOptional: true,
      disabledCommands: ['STARTTLS'],
      logger: false,
      onData: (stream, session, callback) => {
        const chunks: Buffer[] = [];
        stream.on('data', (c: Buffer) => chunks.push(c));
        stream.on('end', () => {
          // Numbered on arrival; kept newest first by number even if two parses finish out of order.
          const id = this.nextId++;
          parseMessage(Buffer.concat(chunks)).then(
            ({ subject, text }) => {
              const mail: CapturedMail = {
                id,
                from: session.envelope.mailFrom ? session.envelope.mailFrom.address : '',
                to: session.envelope.rcptTo.map((r) => r.address),
                subject,
                text,
                receivedAt: new Date().toISOString(),
              };
              const at = this.messages.findIndex((m) => m.id < id);
              this.messages.splice(at < 0 ? this.messages.length : at, 0, mail);
              this.messages.length = Math.min(this.messages.length, KEEP);
              callback();
            },
            (err: Error) => callback(err),
          );
        });
      },
    });
  }

  /** Listens on 127.0.0.1:port (0 = any free port); resolves the port. */
  listen(port: number): Promise<number> {
    return new Promise((resolve, reject) => {
      this.server.once('error', reject);
      this.server.listen(port, '127.0.0.1', () => resolve((this.server.server.address() as AddressInfo).port));
    });
  }

  close(): Promise<void> {
    return new Promise((resolve) => this.server.close(() => resolve()));
  }
}
