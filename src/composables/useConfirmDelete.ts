/** Confirmations for list pages with Naive's dialog: ask, run the action, toast the outcome. */
import { useDialog, useMessage } from 'naive-ui';
import { errorMessage } from '@/api/http';

export interface ConfirmOptions {
  title: string;
  content: string;
  positiveText: string;
  /** The action; a rejection is shown as an error toast and the dialog closes. */
  action: () => Promise<unknown>;
  /** Success toast (none when omitted). */
  doneText?: string;
  onDone?: () => void;
}

export interface ConfirmDeleteOptions {
  /** What is deleted, as the title names it. */
  name: string;
  /** Why to think twice (default: it cannot be undone). */
  content?: string;
  remove: () => Promise<unknown>;
  doneText: string;
  onDone?: () => void;
}

/** `confirm` for any risky action, `confirmDelete` for deletions. Needs TheProviders above. */
export function useConfirmDelete() {
  const dialog = useDialog();
  const message = useMessage();

  /** Runs an action without asking (an action that needs no second thought), with the same toasts. */
  async function run(o: Pick<ConfirmOptions, 'action' | 'doneText' | 'onDone'>): Promise<void> {
    try {
      await o.action();
      if (o.doneText) message.success(o.doneText);
      o.onDone?.();
    } catch (e) {
      message.error(errorMessage(e));
    }
  }

  function confirm(o: ConfirmOptions): void {
    dialog.warning({ title: o.title, content: o.content, positiveText: o.positiveText, negativeText: 'Cancel', onPositiveClick: () => run(o) });
  }

  function confirmDelete(o: ConfirmDeleteOptions): void {
    confirm({ title: `Delete ${o.name}?`, content: o.content ?? 'This cannot be undone.', positiveText: 'Delete', action: o.remove, doneText: o.doneText, onDone: o.onDone });
  }

  return { confirm, confirmDelete, run };
}
