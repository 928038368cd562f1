import { http } from './http';

/** One message captured by the development mail server (`GET /api/v1/dev/mailbox`, SMTP_FAKE=1). Plain text only. */
export interface MailboxMessage {
  id: number;
  from: string;
  to: string[];
  subject: string;
  text: string;
  /** ISO 8601, UTC. */
  receivedAt: string;
}

export const devApi = {
  mailbox: () => http.get<MailboxMessage[]>('/dev/mailbox'),
};
