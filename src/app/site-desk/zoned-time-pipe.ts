import { Pipe, PipeTransform } from '@angular/core';

import { formatInZone } from './zoned-time';

/** `{{ session.testedAt | zonedTime: session.timeZone }}`: a date-time on the site's clock. */
@Pipe({ name: 'zonedTime' })
export class ZonedTimePipe implements PipeTransform {
  transform(iso: string | null | undefined, timeZone: string | null | undefined): string {
    if (!iso) return '';
    return timeZone ? formatInZone(iso, timeZone) : formatInZone(iso, 'UTC');
  }
}
