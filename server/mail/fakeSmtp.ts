/** A local fake SMTP server (smtp-server) that keeps the last messages in memory for the dev mailbox. */
import { SMTPServer } from 'smtp-server';
import type { AddressInfo } from 'node:net';

export interface CapturedMail {
  id: number;
  from: string;
  to: string[];
  subject: string;
  text: string;
  receivedAt: string;
}

const KEEP = 200;

/** Minimal RFC 5322 parse: headers up to the blank line, the rest as text (we only send text/plain + html alternatives). */
function parseMessage(raw: string): { subject: string; text: string } {
  const split = raw.indexOf('\r\n\r\n');
  const head = split >= 0 ? raw.slice(0, split) : raw;
  const body = split >= 0 ? raw.slice(split + 4) : '';
  const unfolded = head.replace(/\r\n[ \t]+/g, ' ');
  const subject = /^Subject: (.*)$/im.exec(unfolded)?.[1] ?? '';
  // For multipart messages, keep the text/plain part.
  const boundary = /boundary="?([^";\r\n]+)"?/i.exec(unfolded)?.[1];
  let text = body;
  if (boundary) {
    const part = body.split(`--${boundary}`).find((p) => /content-type: text\/plain/i.test(p));
    // A mail with attachments nests the text/html alternatives in a multipart part: read that part.
    const partHead = part ? part.slice(0, Math.max(0, part.indexOf('\r\n\r\n'))) : '';
    if (part && /content-type:\s*multipart\//i.test(partHead)) return { subject: decodeHeader(subject), text: parseMessage(part.replace(/^\r\n/, '')).text };
    if (part) text = part.slice(part.indexOf('\r\n\r\n') + 4);
  }
  if (/quoted-printable/i.test(boundary ? text : unfolded) || /=\r\n/.test(text)) {
    text = text.replace(/=\r\n/g, '').replace(/=([0-9A-F]{2})/g, (_m, h: string) => String.fromCharCode(parseInt(h, 16)));
  }
  return { subject: decodeHeader(subject), text: text.trim() };
}

function decodeHeader(v: string): string {
  return v.replace(/=\?utf-8\?([BQ])\?([^?]*)\?=/gi, (_m, enc: string, data: string) =>
    enc.toUpperCase() === 'B' ? Buffer.from(data, 'base64').toString('utf8') : data.replace(/_/g, ' ').replace(/=([0-9A-F]{2})/gi, (_x, h: string) => String.fromCharCode(parseInt(h, 16))),
  );
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
          const { subject, text } = parseMessage(Buffer.concat(chunks).toString('utf8'));
          this.messages.unshift({
            id: this.nextId++,
            from: session.envelope.mailFrom ? session.envelope.mailFrom.address : '',
            to: session.envelope.rcptTo.map((r) => r.address),
            subject,
            text,
            receivedAt: new Date().toISOString(),
          });
          this.messages.length = Math.min(this.messages.length, KEEP);
          callback();
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
