import { createRoot } from 'react-dom/client';

// Entry of the renderer bundle; the screens mount here.
const container = document.getElementById('root');
if (!container) throw new Error('The page has no #root element.');
createRoot(container).render(<main>Spendmix</main>);
