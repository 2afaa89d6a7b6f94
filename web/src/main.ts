import { createApp } from 'vue';
import { createPinia } from 'pinia';
import 'vfonts/Lato.css';
import 'vfonts/FiraCode.css';
import './styles/base.css';
import App from './App.vue';
import { createConsoleRouter } from './router/index.ts';
import { useThemeStore } from './stores/theme.ts';
import { loadDarkTheme } from './theme/applied.ts';

const pinia = createPinia();
const app = createApp(App);
app.use(pinia);
app.use(createConsoleRouter());

// Mounting after the dark theme arrives spares dark-theme users a flash of the light one;
// if it cannot load, the console starts in light rather than not at all.
const ready = useThemeStore(pinia).isDark ? loadDarkTheme().catch(() => undefined) : Promise.resolve();
void ready.then(() => app.mount('#app'));
