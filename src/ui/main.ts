import 'leaflet/dist/leaflet.css';
import './styles/app.css';
import { mount } from 'svelte';
import App from './App.svelte';
import { startOfflineApp } from './state/app-update.svelte.ts';

const app = mount(App, { target: document.getElementById('app')! });
// The built app keeps itself for offline use and watches for new versions (not in development).
void startOfflineApp();
export default app;
