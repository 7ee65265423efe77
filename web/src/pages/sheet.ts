// The Bench sheet page (stub until its issue-14 build lands).
import { mountPage } from '../lib/layout.js';
import { h } from '../lib/dom.js';

const page = mountPage('Bench sheet', 'none');
page.main.append(h('h1', null, 'Bench sheet'));
