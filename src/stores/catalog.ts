/** Customers and sites for pickers (one fetch each, refreshed after edits). */
import { defineStore } from 'pinia';
import { computed, ref, shallowRef } from 'vue';
import type { CustomerDto, SiteDto } from '@shared/schemas/customers';
import { customersApi } from '@/api/customers';
import { sitesApi } from '@/api/sites';
import { errorMessage } from '@/api/http';

export const useCatalogStore = defineStore('catalog', () => {
  const customers = shallowRef<CustomerDto[]>([]);
  const sites = shallowRef<SiteDto[]>([]);
  const loading = ref(false);
  const error = ref<string | null>(null);
  const loaded = ref(false);

  async function load(force = false) {
    if (loaded.value && !force) return;
    loading.value = true;
    try {
      const [c, s] = await Promise.all([customersApi.list({ page: 1, pageSize: 200 }), sitesApi.list({ page: 1, pageSize: 200 })]);
      customers.value = c.items;
      sites.value = s.items;
      loaded.value = true;
      error.value = null;
    } catch (e) {
      error.value = errorMessage(e);
    } finally {
      loading.value = false;
    }
  }

  const customerOptions = computed(() => customers.value.map((c) => ({ label: c.name, value: c.id })));
  const siteOptions = computed(() => sites.value.map((s) => ({ label: `${s.name} — ${s.customerName}`, value: s.id })));
  const customerName = (id: number | null | undefined) => customers.value.find((c) => c.id === id)?.name ?? (id ? `#${id}` : '—');

  return { customers, sites, loading, error, loaded, load, customerOptions, siteOptions, customerName };
});
