// The Outcomes page (stub until its issue-14 build lands).
import { mountPage } from '../lib/layout.js';
import { h } from '../lib/dom.js';

const page = mountPage('Outcomes', 'none');
page.main.append(h('h1', null, 'Outcomes'));
