import { StrictMode } from 'react';
import { createRoot } from 'react-dom/client';
import './styles/fonts.css';
import './styles/app.css';
import { createApp } from './app/provider';

const container = document.getElementById('root');
if (!container) throw new Error('index.html has no #root element');

const { App } = createApp();

createRoot(container).render(
  <StrictMode>
    <App />
  </StrictMode>,
);
