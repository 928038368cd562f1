import { http } from './http';

export interface MailboxMessage {
  id: string | number;
  to: string;
  subject: string;
  text: string;
  html: string | null;
  receivedAt: string;
}

export const devApi = {
  mailbox: () => http.get<MailboxMessage[]>('/dev/mailbox'),
};
