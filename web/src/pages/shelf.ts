// The Shelf page (stub until its issue-14 build lands).
import { mountPage } from '../lib/layout.js';
import { h } from '../lib/dom.js';

const page = mountPage('Shelf', 'none');
page.main.append(h('h1', null, 'Shelf'));
