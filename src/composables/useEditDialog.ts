/**
 * The edit dialog of a list page: open for a new row or an existing one, fill the form, check it
 * on the client, save through the API, show the server's field errors from a 400/422 problem
 * beside their fields (and its sentence above the buttons), close.
 */
import { reactive, ref, shallowRef, type UnwrapRef } from 'vue';
import { useMessage } from 'naive-ui';
import { errorMessage } from '@/api/http';
import { useFieldErrors } from '@/composables/useFieldErrors';

export type FieldErrorsApi = ReturnType<typeof useFieldErrors>;

export interface EditDialogOptions<Row, Form extends object, Body, Result> {
  /** The form of a new row. */
  blank: () => Form;
  /** The form of an existing row (a create-only dialog leaves it out). */
  fromRow?: (row: Row) => Form;
  /** Checks the form and builds the body; sets field errors and returns null when it is not valid. */
  parse: (form: UnwrapRef<Form>, ctx: { editing: Row | null; fe: FieldErrorsApi }) => Body | null;
  /** Sends the body (create when `editing` is null). */
  submit: (body: Body, editing: Row | null) => Promise<Result>;
  /** The success toast (none when it returns null). */
  savedText?: (editing: Row | null, result: Result) => string | null;
  /** After a successful save (reload the list, refresh pickers). */
  onSaved?: (result: Result, editing: Row | null) => void;
}

/** State and actions of one edit dialog. */
export function useEditDialog<Row, Form extends object, Body, Result = unknown>(opts: EditDialogOptions<Row, Form, Body, Result>) {
  const message = useMessage();
  const fe = useFieldErrors();
  const show = ref(false);
  const editing = shallowRef<Row | null>(null);
  const busy = ref(false);
  const problem = ref<string | null>(null);
  const form = reactive(opts.blank());

  /** Opens the dialog for `row`, or for a new row when null; `overrides` preset fields of a new row. */
  function open(row: Row | null, overrides: Partial<Form> = {}) {
    editing.value = row;
    Object.assign(form, row && opts.fromRow ? opts.fromRow(row) : { ...opts.blank(), ...overrides });
    fe.clear();
    problem.value = null;
    show.value = true;
  }

  function close() {
    if (!busy.value) show.value = false;
  }

  /** Checks, sends and closes on success; returns true when saved. */
  async function save(): Promise<boolean> {
    if (busy.value) return false;
    problem.value = null;
    const body = opts.parse(form as UnwrapRef<Form>, { editing: editing.value, fe });
    if (body === null) return false;
    fe.clear();
    busy.value = true;
    const was = editing.value;
    try {
      const result = await opts.submit(body, was);
      const text = opts.savedText?.(was, result);
      if (text) message.success(text);
      show.value = false;
      opts.onSaved?.(result, was);
      return true;
    } catch (e) {
      fe.fromApi(e);
      problem.value = errorMessage(e);
      return false;
    } finally {
      busy.value = false;
    }
  }

  return { show, editing, busy, problem, fe, form, open, close, save };
}
