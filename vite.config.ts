import { fileURLToPath, URL } from 'node:url';
import { defineConfig } from 'vite';
import vue from '@vitejs/plugin-vue';

const apiPort = Number(process.env.PORT ?? 3000);

export default defineConfig({
  plugins: [vue()],
  resolve: {
    alias: {
      '@': fileURLToPath(new URL('./src', import.meta.url)),
      '@shared': fileURLToPath(new URL('./shared', import.meta.url)),
    },
  },
  server: {
    host: '127.0.0.1',
    port: 5173,
    strictPort: true,
    proxy: {
      '/api': { target: `http://127.0.0.1:${apiPort}` },
      '/metrics': { target: `http://127.0.0.1:${apiPort}` },
      '/ws': { target: `ws://127.0.0.1:${apiPort}`, ws: true },
    },
  },
  build: {
    outDir: 'dist/client',
    emptyOutDir: true,
    chunkSizeWarningLimit: 1200,
    rollupOptions: {
      output: {
        // Groups (rolldown): a group also captures its modules' dependencies, so Vue, the router and
        // Pinia get their own top-priority chunk; otherwise Vue landed in 'charts' via vue-echarts and
        // the whole ECharts bundle was preloaded on every page. Naive UI has no group of its own: its
        // components split with the routes that use them, so the first page loads only its own.
        codeSplitting: {
          groups: [
            { name: 'vue', test: /node_modules[\\/](@vue|vue|vue-router|pinia)[\\/]/, priority: 30 },
            { name: 'charts', test: /node_modules[\\/](echarts|zrender|vue-echarts)[\\/]/, priority: 10 },
          ],
        },
      },
    },
  },
});
