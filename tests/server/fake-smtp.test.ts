/**
 * The dev mailbox shows what a person would read: a subject with non-ASCII text that nodemailer folds
 * into several RFC 2047 encoded words comes back whole, and the plain text survives an attachment.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import nodemailer, { type SendMailOptions } from 'nodemailer';
import { FakeSmtp } from '../../server/mail/fakeSmtp';

let smtp: FakeSmtp;
let port: number;

beforeAll(async () => {
  smtp = new FakeSmtp();
  port = await smtp.listen(0);
});
afterAll(() => smtp.close());

async function send(mail: SendMailOptions) {
  const t = nodemailer.createTransport({ host: '127.0.0.1', port, secure: false, ignoreTLS: true });
  await t.sendMail({ from: 'Rimehold <no-reply@rimehold.example.com>', to: 'tech@example.test', ...mail });
  t.close();
}

describe('fake SMTP mailbox', () => {
  it('decodes a long folded UTF-8 subject exactly (em dash, degree sign, no stray spaces)', async () => {
    const subject = '[Rimehold] high alarm: Prep walk-in cooler (Juniper Lane — Riverside Kitchen) box air 46.2 °F above 41 °F';
    await send({ subject, text: 'Box air is not food temperature.' });
    const got = smtp.messages[0]!;
    expect(got.subject).toBe(subject);
    expect(got.text).toBe('Box air is not food temperature.');
  });

  it('keeps the plain text of a message with html and an attachment', async () => {
    await send({
      subject: 'Weekly report',
      text: 'Time in range 99.1 %',
      html: '<p>Time in range 99.1 %</p>',
      attachments: [{ filename: 'week.pdf', content: Buffer.from('%PDF-1.4\n%%EOF\n') }],
    });
    expect(smtp.messages[0]!.subject).toBe('Weekly report');
    expect(smtp.messages[0]!.text).toBe('Time in range 99.1 %');
  });

  it('lists messages newest first with increasing ids', async () => {
    await send({ subject: 'first', text: 'a' });
    await send({ subject: 'second', text: 'b' });
    expect(smtp.messages.slice(0, 2).map((m) => m.subject)).toEqual(['second', 'first']);
    expect(smtp.messages[0]!.id).toBeGreaterThan(smtp.messages[1]!.id);
  });
});
