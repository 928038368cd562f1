/** The import page: choose a file → dry-run table → Import only when every row is ready → secrets downloaded once. */
import { afterEach, describe, expect, it, vi } from 'vitest';
import { flushPromises, type VueWrapper } from '@vue/test-utils';
import type { ImportReport, ImportResult } from '@shared/schemas/imports';
import ImportView from '@/views/admin/ImportView.vue';
import { secretsCsv } from '@/api/imports';
import { json, mountView, problem, setup, stubFetch, type Call } from './helpers';

afterEach(() => {
  vi.unstubAllGlobals();
  vi.restoreAllMocks();
  document.body.innerHTML = '';
});

const CREATES = { customerName: 'Harrow Street Grocers', siteName: 'Lakeshore', boxName: 'Beverage walk-in', kind: 'cooler' as const, setpointC: 2, controllerSerial: 'HS-0201' };

function reportOf(rows: ImportReport['rows'], dryRun = true): ImportReport {
  const ok = rows.filter((r) => r.status === 'ok').length;
  return {
    dryRun,
    ok: rows.length > 0 && ok === rows.length,
    rows,
    counts: { rows: rows.length, ok, rejected: rows.length - ok, boxes: ok, controllers: rows.filter((r) => r.creates?.controllerSerial).length },
  };
}

const GOOD = reportOf([{ line: 2, status: 'ok', reasons: [], creates: CREATES }]);
const BAD = reportOf([
  { line: 2, status: 'ok', reasons: [], creates: CREATES },
  { line: 3, status: 'rejected', reasons: ['site: unknown site "Nowhere"', 'refrigerant: "R-9999" is not a refrigerant Rimehold knows'], creates: null },
]);
const RESULT: ImportResult = { ...GOOD, dryRun: false, boxIds: [41], secrets: [{ serial: 'HS-0201', boxId: 41, deviceSecret: 'secret-one-abcdefghijklmnopqrstuvwxyz0123456' }] };

async function openWith(handler: (call: Call) => Response) {
  const ctx = setup({ role: 'admin' });
  const { calls } = stubFetch(handler);
  await ctx.router.push('/import');
  const wrapper = mountView(ImportView, ctx);
  await flushPromises();
  return { wrapper, calls };
}

async function chooseFile(wrapper: VueWrapper, text = 'customer,site\n') {
  const input = wrapper.find('[data-test="import-file"]');
  const file = new File([text], 'boxes.csv', { type: 'text/csv' });
  Object.defineProperty(input.element, 'files', { value: [file], configurable: true });
  await input.trigger('change');
  await flushPromises();
}

const importButton = (w: VueWrapper) => w.find('[data-test="import-run"]');

describe('ImportView', () => {
  it('dry-runs the chosen file and lists each rejected row with its reasons, keeping Import disabled', async () => {
    const { wrapper, calls } = await openWith(() => json(200, BAD));
    await chooseFile(wrapper);
    expect(calls).toHaveLength(1);
    expect(calls[0]?.url).toBe('/api/v1/imports/boxes?dryRun=1');
    expect(calls[0]?.method).toBe('POST');
    expect(calls[0]?.headers['x-csrf-token']).toBe('csrf-test-token');
    expect(wrapper.find('[data-test="import-summary"]').text()).toContain('2 rows: 1 ready, 1 rejected');
    const statuses = wrapper.findAll('[data-test="import-row-status"]').map((s) => s.text());
    expect(statuses).toEqual(['Ready', 'Rejected']);
    const reasons = wrapper.findAll('[data-test="import-row-reasons"] li').map((li) => li.text());
    expect(reasons).toEqual(['site: unknown site "Nowhere"', 'refrigerant: "R-9999" is not a refrigerant Rimehold knows']);
    expect(importButton(wrapper).attributes('disabled')).toBeDefined();
  });

  it('enables Import when every row is ready, then shows the counts and downloads the secrets as serial,secret CSV', async () => {
    const { wrapper, calls } = await openWith((c) => (c.url.includes('dryRun') ? json(200, GOOD) : json(201, RESULT)));
    await chooseFile(wrapper);
    expect(wrapper.find('[data-test="import-row-creates"]').text()).toContain('Cooler "Beverage walk-in" at Harrow Street Grocers · Lakeshore');
    expect(importButton(wrapper).attributes('disabled')).toBeUndefined();
    await importButton(wrapper).trigger('click');
    await flushPromises();
    expect(calls.map((c) => c.url)).toEqual(['/api/v1/imports/boxes?dryRun=1', '/api/v1/imports/boxes']);
    expect(wrapper.find('[data-test="import-done"]').text()).toContain('Imported 1 box and 1 controller');
    expect(wrapper.find('[data-test="import-secrets-warning"]').text()).toContain('shown only now');

    const blobs: Blob[] = [];
    vi.stubGlobal('URL', Object.assign(Object.create(URL), { createObjectURL: (b: Blob) => (blobs.push(b), 'blob:import-secrets'), revokeObjectURL: () => undefined }));
    const click = vi.spyOn(HTMLAnchorElement.prototype, 'click').mockImplementation(() => undefined);
    await wrapper.find('[data-test="import-download-secrets"]').trigger('click');
    expect(click).toHaveBeenCalledTimes(1);
    expect(blobs).toHaveLength(1);
    expect(await blobs[0]?.text()).toBe('serial,secret\r\nHS-0201,secret-one-abcdefghijklmnopqrstuvwxyz0123456\r\n');
    expect(wrapper.find('[data-test="import-downloaded"]').exists()).toBe(true);
  });

  it('shows the fresh row report when the import itself is refused, and imports nothing', async () => {
    const refused = reportOf([{ line: 2, status: 'rejected', reasons: ['controller_serial: HS-0201 is already provisioned'], creates: null }], false);
    const { wrapper } = await openWith((c) =>
      c.url.includes('dryRun') ? json(200, GOOD) : problem(422, { type: 'https://rimehold.example.com/problems/import-rows', title: 'Some rows cannot be imported', report: refused }),
    );
    await chooseFile(wrapper);
    await importButton(wrapper).trigger('click');
    await flushPromises();
    expect(wrapper.find('[data-test="import-problem"]').text()).toContain('Nothing was imported');
    expect(wrapper.find('[data-test="import-row-reasons"]').text()).toContain('HS-0201 is already provisioned');
    expect(wrapper.find('[data-test="import-done"]').exists()).toBe(false);
    expect(importButton(wrapper).attributes('disabled')).toBeDefined();
  });

  it('shows the server’s sentence for a file it refuses outright (415)', async () => {
    const { wrapper } = await openWith(() => problem(415, { title: 'Not a CSV text file', detail: 'The file holds NUL bytes, so it is not a text file.' }));
    await chooseFile(wrapper, '\u0000PNG');
    expect(wrapper.find('[data-test="import-problem"]').text()).toBe('The file holds NUL bytes, so it is not a text file.');
    expect(wrapper.find('[data-test="import-table"]').exists()).toBe(false);
  });
});

describe('secretsCsv', () => {
  it('quotes a cell that holds a comma or a quote', () => {
    expect(secretsCsv([{ serial: 'A,1', boxId: 1, deviceSecret: 'x"y' }])).toBe('serial,secret\r\n"A,1","x""y"\r\n');
  });
});
