/** The shared parts of the list pages: ListPage, useEditDialog, useConfirmDelete, and the controllers page built on them. */
import { afterEach, describe, expect, it, vi } from 'vitest';
import { defineComponent, h } from 'vue';
import { flushPromises } from '@vue/test-utils';
import { NButton, NFormItem, NInput, type DataTableColumns } from 'naive-ui';
import { BOX_DEFAULTS, BOX_NUMBER_FIELDS } from '@shared/boxFields';
import { BoxCreateBody, BOX_LIMITS } from '@shared/schemas/boxes';
import type { Page } from '@shared/schemas/common';
import ListPage from '@/components/list/ListPage.vue';
import ListEditDialog from '@/components/list/ListEditDialog.vue';
import ControllersView from '@/views/admin/ControllersView.vue';
import type { ControllerListItem } from '@/api/boxes';
import { http } from '@/api/http';
import { usePagedList } from '@/composables/usePagedList';
import { useEditDialog } from '@/composables/useEditDialog';
import { useConfirmDelete } from '@/composables/useConfirmDelete';
import { json, mountView, problem, setup, stubFetch, type Call } from './helpers';

afterEach(() => {
  vi.useRealTimers();
  vi.unstubAllGlobals();
  document.body.innerHTML = '';
});

interface Thing {
  id: number;
  name: string;
  colour: string;
}
const page = (items: Thing[], total = items.length): Page<Thing> => ({ items, page: 1, pageSize: 25, total });
const THINGS: Thing[] = [
  { id: 1, name: 'Alder', colour: 'green' },
  { id: 2, name: 'Birch', colour: 'white' },
];

/** A list page over GET /things with one sortable column, an add button and a delete per row. */
function thingsPage(opts: { layout?: 'table' | 'cards' } = {}) {
  return defineComponent({
    setup() {
      const list = usePagedList((a) => http.get<Page<Thing>>('/things', { ...a }));
      void list.reload();
      const { confirmDelete } = useConfirmDelete();
      const edit = useEditDialog({
        blank: () => ({ name: '' }),
        fromRow: (t: Thing) => ({ name: t.name }),
        parse: (f, { fe }) => {
          if (f.name.trim() === '') {
            fe.set({ name: 'Enter a name' });
            return null;
          }
          return { name: f.name.trim() };
        },
        submit: (body, editing) => (editing ? http.patch<Thing>(`/things/${editing.id}`, body) : http.post<Thing>('/things', body)),
        savedText: (editing) => (editing ? 'Saved' : 'Added'),
        onSaved: () => void list.reload(),
      });
      const columns: DataTableColumns<Thing> = [
        { title: 'Name', key: 'name', sorter: true },
        { title: 'Colour', key: 'colour' },
        {
          title: '',
          key: 'actions',
          render: (t) =>
            h('div', { class: 'rh-toolbar' }, [
              h(NButton, { size: 'small', onClick: () => edit.open(t) }, () => 'Edit'),
              h(NButton, { size: 'small', 'data-test': 'thing-delete', onClick: () => confirmDelete({ name: t.name, remove: () => http.del(`/things/${t.id}`), doneText: 'Deleted', onDone: () => void list.reload() }) }, () => 'Delete'),
            ]),
        },
      ];
      return () =>
        h(
          ListPage<Thing>,
          { title: 'Things', list, columns, rowKey: (t: Thing) => t.id, addLabel: 'New thing', addTestId: 'thing-new', emptyText: 'No things yet.', layout: opts.layout ?? 'table', onAdd: () => edit.open(null) },
          {
            default: () =>
              h(
                ListEditDialog,
                { show: edit.show.value, 'onUpdate:show': (v: boolean) => (edit.show.value = v), title: 'Thing', busy: edit.busy.value, problem: edit.problem.value, onSave: () => void edit.save() },
                () => h(NFormItem, { label: 'Name', ...edit.fe.item('name') }, () => h(NInput, { value: edit.form.name, 'onUpdate:value': (v: string) => (edit.form.name = v), inputProps: { 'data-test': 'thing-name' } as Record<string, string> })),
              ),
          },
        );
    },
  });
}

async function mountThings(handler: (c: Call) => Response, opts: { layout?: 'table' | 'cards' } = {}) {
  const ctx = setup({ role: 'admin' });
  const fetched = stubFetch(handler);
  const w = mountView(thingsPage(opts), ctx);
  await flushPromises();
  return { w, fetched };
}

const gets = (calls: Call[]) => calls.filter((c) => c.method === 'GET').map((c) => c.url);
const submitDialog = () => document.querySelector<HTMLFormElement>('.n-card form')!.dispatchEvent(new Event('submit'));

describe('ListPage', () => {
  it('shows the rows the endpoint answers, in a table with its label', async () => {
    const { w } = await mountThings(() => json(200, page(THINGS)));
    expect(w.find('[data-test="list-table"]').exists()).toBe(true);
    expect(w.text()).toContain('Alder');
    expect(w.text()).toContain('Birch');
    expect(w.find('h2').text()).toBe('Things');
  });

  it('searches on the server after the typing settles, from the first page', async () => {
    const { w, fetched } = await mountThings(() => json(200, page(THINGS)));
    vi.useFakeTimers();
    await w.find('[data-test="list-search"] input').setValue('bir');
    vi.advanceTimersByTime(350);
    vi.useRealTimers();
    await flushPromises();
    expect(gets(fetched.calls).at(-1)).toBe('/api/v1/things?page=1&pageSize=25&q=bir');
  });

  it('asks the server to sort by the clicked column, and the other way round on the next click', async () => {
    const { w, fetched } = await mountThings(() => json(200, page(THINGS)));
    const header = () => w.findAll('th').find((t) => t.text().includes('Name'))!;
    const sortOf = () => new URL(`http://x${gets(fetched.calls).at(-1)}`).searchParams;
    await header().trigger('click');
    await flushPromises();
    const first = sortOf();
    expect(first.get('sort')).toBe('name');
    expect(first.get('page')).toBe('1');
    await header().trigger('click');
    await flushPromises();
    const second = sortOf();
    expect(second.get('sort')).toBe('name');
    expect([first.get('order'), second.get('order')].sort()).toEqual(['asc', 'desc']);
  });

  it('says so when there is nothing, and names the search when it matched nothing', async () => {
    const { w } = await mountThings(() => json(200, page([])));
    expect(w.find('[data-test="list-empty"]').text()).toBe('No things yet.');
    vi.useFakeTimers();
    await w.find('[data-test="list-search"] input').setValue('oak');
    vi.advanceTimersByTime(350);
    vi.useRealTimers();
    await flushPromises();
    expect(w.find('[data-test="list-empty"]').text()).toBe('Nothing matches “oak”.');
  });

  it('shows the server’s sentence when the list fails and fetches again on Try again', async () => {
    let fail = true;
    const { w, fetched } = await mountThings(() => (fail ? problem(503, { type: 'x', title: 'Unavailable', detail: 'The database is restarting' }) : json(200, page(THINGS))));
    expect(w.find('[data-test="list-error"]').text()).toContain('The database is restarting.');
    fail = false;
    await w.findAll('button').find((b) => b.text() === 'Try again')!.trigger('click');
    await flushPromises();
    expect(gets(fetched.calls)).toHaveLength(2);
    expect(w.find('[data-test="list-error"]').exists()).toBe(false);
    expect(w.text()).toContain('Birch');
  });

  it('lays rows out as cards on phones, one labelled line per column and the actions at the foot', async () => {
    const { w } = await mountThings(() => json(200, page(THINGS)), { layout: 'cards' });
    expect(w.find('[data-test="list-table"]').exists()).toBe(false);
    const cards = w.findAll('[data-test="list-cards"] > li');
    expect(cards).toHaveLength(2);
    expect(cards[0]!.find('.card-title').text()).toBe('Alder');
    expect(cards[0]!.find('dt').text()).toBe('Colour');
    expect(cards[0]!.find('dd').text()).toBe('green');
    expect(cards[0]!.find('.card-actions').text()).toContain('Edit');
  });
});

describe('useEditDialog', () => {
  it('keeps the dialog open with the client’s field error and sends nothing when the form is not valid', async () => {
    const { w, fetched } = await mountThings(() => json(200, page(THINGS)));
    await w.find('[data-test="thing-new"]').trigger('click');
    await flushPromises();
    submitDialog();
    await flushPromises();
    expect(document.body.textContent).toContain('Enter a name');
    expect(fetched.calls.filter((c) => c.method === 'POST')).toHaveLength(0);
  });

  it('shows the field errors of a 400 problem beside their fields and the sentence above the buttons', async () => {
    const { w, fetched } = await mountThings((c) =>
      c.method === 'POST' ? problem(400, { type: 'https://rimehold.example.com/problems/validation', title: 'The request is not valid', detail: 'Check the request body: name: taken', errors: { name: ['Name already used'] } }) : json(200, page(THINGS)),
    );
    await w.find('[data-test="thing-new"]').trigger('click');
    await flushPromises();
    const input = document.querySelector<HTMLInputElement>('input[data-test="thing-name"]')!;
    input.value = 'Alder';
    input.dispatchEvent(new Event('input'));
    await flushPromises();
    submitDialog();
    await flushPromises();
    expect(fetched.calls.find((c) => c.method === 'POST')?.body).toEqual({ name: 'Alder' });
    expect(document.querySelector('.n-form-item-feedback')?.textContent).toBe('Name already used');
    expect(document.querySelector('[data-test="dialog-problem"]')?.textContent).toContain('Check the request body');
    expect(document.querySelector('.n-card form')).not.toBeNull();
  });

  it('opens an existing row with its values, saves with PATCH, closes and reloads the list', async () => {
    const { w, fetched } = await mountThings((c) => (c.method === 'PATCH' ? json(200, { ...THINGS[0], ...(c.body as object) }) : json(200, page(THINGS))));
    await w.findAll('button').find((b) => b.text() === 'Edit')!.trigger('click');
    await flushPromises();
    const input = document.querySelector<HTMLInputElement>('input[data-test="thing-name"]')!;
    expect(input.value).toBe('Alder');
    input.value = 'Alder grove';
    input.dispatchEvent(new Event('input'));
    await flushPromises();
    submitDialog();
    await flushPromises();
    const patch = fetched.calls.find((c) => c.method === 'PATCH');
    expect(patch?.url).toBe('/api/v1/things/1');
    expect(patch?.body).toEqual({ name: 'Alder grove' });
    expect(gets(fetched.calls)).toHaveLength(2);
    expect(document.body.textContent).toContain('Saved');
  });
});

describe('useConfirmDelete', () => {
  it('asks first, deletes only after Delete is pressed, then reloads', async () => {
    const { w, fetched } = await mountThings((c) => (c.method === 'DELETE' ? json(204, null) : json(200, page(THINGS))));
    await w.find('[data-test="thing-delete"]').trigger('click');
    await flushPromises();
    expect(document.body.textContent).toContain('Delete Alder?');
    expect(fetched.calls.filter((c) => c.method === 'DELETE')).toHaveLength(0);
    const confirmButton = [...document.querySelectorAll<HTMLButtonElement>('.n-dialog button')].find((b) => b.textContent?.trim() === 'Delete')!;
    confirmButton.click();
    await flushPromises();
    expect(fetched.calls.filter((c) => c.method === 'DELETE').map((c) => c.url)).toEqual(['/api/v1/things/1']);
    expect(gets(fetched.calls)).toHaveLength(2);
  });
});

describe('ControllersView', () => {
  const CONTROLLER: ControllerListItem = {
    id: 9,
    serial: 'RH-00042',
    valveFullSteps: 1600,
    firmware: '2.1',
    gaugeReference: 'vented-gauge',
    lastSeenAt: null,
    online: true,
    disabled: false,
    boxId: 5,
    boxName: 'Dairy walk-in',
    siteId: 2,
    siteName: 'Depot',
    customerId: 3,
    customerName: 'Northfield Grocers',
    secretRotatedAt: null,
    createdAt: '2026-01-01T00:00:00.000Z',
  };

  async function openControllers() {
    const ctx = setup({ role: 'admin' });
    const fetched = stubFetch((c) => {
      if (c.url.startsWith('/api/v1/controllers') && c.method === 'GET') return json(200, { items: [CONTROLLER], page: 1, pageSize: 25, total: 1 });
      if (c.url === '/api/v1/controllers/9' && c.method === 'PATCH') return json(200, { ...CONTROLLER, ...(c.body as object) });
      return problem(404, { type: 'x', title: 'Not found' });
    });
    await ctx.router.push('/admin/controllers');
    const w = mountView(ControllersView, ctx);
    await flushPromises();
    return { w, fetched };
  }

  it('lists controllers from GET /controllers, not from the boxes', async () => {
    const { w, fetched } = await openControllers();
    expect(gets(fetched.calls)).toEqual(['/api/v1/controllers?page=1&pageSize=25']);
    expect(w.text()).toContain('RH-00042');
    expect(w.text()).toContain('Northfield Grocers · Depot');
    expect(w.find('[data-test="controller-gauge"]').text()).toContain('Vented gauge');
  });

  it('changes a controller’s gauge reference with PATCH after the confirmation', async () => {
    const { w, fetched } = await openControllers();
    await w.find('[data-test="controller-gauge"] .n-base-selection').trigger('click');
    await flushPromises();
    const option = [...document.querySelectorAll<HTMLElement>('.n-base-select-option')].find((o) => o.textContent?.includes('Sealed gauge'));
    expect(option).toBeDefined();
    option!.click();
    await flushPromises();
    expect(fetched.calls.filter((c) => c.method === 'PATCH')).toHaveLength(0);
    const change = [...document.querySelectorAll<HTMLButtonElement>('.n-dialog button')].find((b) => b.textContent?.trim() === 'Change')!;
    change.click();
    await flushPromises();
    expect(fetched.calls.filter((c) => c.method === 'PATCH').map((c) => [c.url, c.body])).toEqual([['/api/v1/controllers/9', { gaugeReference: 'sealed-gauge' }]]);
  });
});

describe('box fields (shared/boxFields.ts)', () => {
  it('gives starting values every kind can be created with', () => {
    for (const kind of ['cooler', 'freezer'] as const) {
      expect(BoxCreateBody.safeParse({ siteId: 1, name: 'Walk-in', refrigerant: 'R-448A', ...BOX_DEFAULTS[kind] }).success, kind).toBe(true);
    }
  });

  it('keeps the cooler’s high limit at 5 °C', () => {
    // 41 °F = 5 °C: FDA Food Code 3-501.16(A)(2) cold holding.
    expect(BOX_DEFAULTS.cooler.highLimitC).toBe(5);
  });

  it('takes each field’s limits from the schema’s BOX_LIMITS', () => {
    for (const f of BOX_NUMBER_FIELDS) {
      const key = f.key === 'highLimitC' || f.key === 'lowLimitC' ? 'limitC' : f.key;
      expect(f.limits, f.key).toBe(BOX_LIMITS[key]);
    }
  });
});
