import '@fontsource/roboto/latin-400.css';
import '@fontsource/roboto/latin-500.css';
import '@fontsource/roboto/latin-700.css';
import './styles.css';
import { createApp } from 'vue';
import { createPinia } from 'pinia';
import App from './App.vue';
import { createAppRouter } from './router';
import { installHttpWiring } from './api/wiring';
import { initDiscrete } from './lib/discrete';
import { setLiveResync } from './composables/useLive';
import { useFleetStore } from './stores/fleet';
import { installA11yFixes } from './lib/a11yFixes';

const pinia = createPinia();
const router = createAppRouter(pinia);
const ui = initDiscrete(pinia);
installHttpWiring(router, pinia, { notify: (text) => ui.message.warning(text, { duration: 6000 }) });
setLiveResync(() => useFleetStore(pinia).load());

router.beforeEach(() => {
  ui.loadingBar.start();
});
router.afterEach(() => {
  ui.loadingBar.finish();
});
router.onError(() => {
  ui.loadingBar.error();
});

createApp(App).use(pinia).use(router).mount('#app');
installA11yFixes();
