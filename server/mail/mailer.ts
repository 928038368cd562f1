/** Outgoing mail through nodemailer over SMTP (in development and tests, the local fake in fakeSmtp.ts). */
import nodemailer, { type Transporter } from 'nodemailer';
import type { Config } from '../config';

export interface MailMessage {
  to: string;
  subject: string;
  text: string;
  html?: string;
  /** Files sent with the mail (e.g. a chart as SVG); `cid` lets the HTML part refer to one inline. */
  attachments?: Array<{ filename: string; content: string | Buffer; contentType: string; cid?: string }>;
}

export interface Mailer {
  send(msg: MailMessage): Promise<void>;
  close(): void;
}

/** A mailer for the configured SMTP server. */
export function createMailer(config: Config, smtpPort = config.SMTP_PORT): Mailer {
  const transport: Transporter = nodemailer.createTransport({
    host: config.SMTP_HOST,
    port: smtpPort,
    secure: config.SMTP_SECURE,
    // The local fake speaks plain SMTP on loopback; a real relay is reached with TLS and auth.
    ignoreTLS: config.SMTP_FAKE,
    auth: config.SMTP_USER ? { user: config.SMTP_USER, pass: config.SMTP_PASSWORD ?? '' } : undefined,
  });
  return {
    async send(msg) {
      await transport.sendMail({ from: config.MAIL_FROM, ...msg });
    },
    close() {
      transport.close();
    },
  };
}
