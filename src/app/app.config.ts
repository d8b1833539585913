import { provideHttpClient, withInterceptors } from '@angular/common/http';
import {
  ApplicationConfig,
  ErrorHandler,
  inject,
  provideAppInitializer,
  provideBrowserGlobalErrorListeners,
  provideZonelessChangeDetection,
} from '@angular/core';
import { MatIconRegistry } from '@angular/material/icon';
import { provideRouter, withComponentInputBinding } from '@angular/router';

import { APP_ROUTES } from './app.routes';
import { sessionExpiryInterceptor } from './core/auth/session-expiry-interceptor';
import { csrfInterceptor } from './core/auth/csrf-interceptor';
import { AppErrorHandler } from './core/errors/app-error-handler';
import { errorInterceptor } from './core/http/error-interceptor';

/** Providers of the browser app: zoneless, router with input binding, HTTP with our interceptors. */
export const appConfig: ApplicationConfig = {
  providers: [
    provideZonelessChangeDetection(),
    provideBrowserGlobalErrorListeners(),
    { provide: ErrorHandler, useClass: AppErrorHandler },
    provideRouter(APP_ROUTES, withComponentInputBinding()),
    provideHttpClient(withInterceptors([csrfInterceptor, errorInterceptor, sessionExpiryInterceptor])),
    // Icons come from the bundled Material Symbols font (see styles.scss), not Material Icons.
    provideAppInitializer(() => {
      inject(MatIconRegistry).setDefaultFontSetClass('material-symbols-outlined');
    }),
  ],
};
