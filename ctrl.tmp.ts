import { buildApp } from './server/http/app.js';
