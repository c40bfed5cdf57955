import { useCallback, useEffect, useRef, useState } from 'react';
import { useVirtualizer } from '@tanstack/react-virtual';
import { pagesForRange, pagesToEvict } from '../lib/paging.js';

export interface Column<Row> {
  key: string;
  header: string;
  /** CSS grid track, e.g. '8rem' or 'minmax(10rem, 2fr)'. */
  width: string;
  align?: 'left' | 'right';
  render: (row: Row) => React.ReactNode;
}

interface VirtualTableProps<Row> {
  columns: Column<Row>[];
  total: number;
  /** Fetches rows [offset, offset + limit) from the core. */
  fetchPage: (offset: number, limit: number) => Promise<Row[]>;
  /** Change it to drop cached pages (after a decision, a filter change…). */
  version?: string | number;
  pageSize?: number;
  height?: number;
  rowHeight?: number;
  testId: string;
  label: string;
  rowTestId?: (row: Row, index: number) => string;
  rowClassName?: (row: Row, index: number) => string;
  selectedIndex?: number | null;
  onSelect?: (index: number, row: Row) => void;
}

const cachedPageLimit = 12;

/**
 * A table that renders only the rows in view (@tanstack/react-virtual) and fetches only the
 * pages covering them, so a million-row list costs the same as a hundred-row one.
 */
export function VirtualTable<Row>({
  columns,
  total,
  fetchPage,
  version = 0,
  pageSize = 100,
  height = 360,
  rowHeight = 34,
  testId,
  label,
  rowTestId,
  rowClassName,
  selectedIndex = null,
  onSelect,
}: VirtualTableProps<Row>) {
  const scroller = useRef<HTMLDivElement>(null);
  const [pages, setPages] = useState<Map<number, Row[]>>(new Map());
  const requested = useRef(new Set<number>());
  const generation = useRef(0);

  useEffect(() => {
    generation.current += 1;
    requested.current = new Set();
    setPages(new Map());
  }, [version, fetchPage]);

  const virtualizer = useVirtualizer({
    count: total,
    getScrollElement: () => scroller.current,
    estimateSize: () => rowHeight,
    overscan: 12,
  });
  const items = virtualizer.getVirtualItems();
  const first = items.length ? items[0].index : 0;
  const last = items.length ? items[items.length - 1].index : -1;

  const load = useCallback(
    (page: number) => {
      if (requested.current.has(page)) return;
      requested.current.add(page);
      const mine = generation.current;
      fetchPage(page * pageSize, pageSize).then(
        (rows) => {
          if (mine !== generation.current) return;
          setPages((current) => {
            const next = new Map(current);
            next.set(page, rows);
            return next;
          });
        },
        () => {
          // Let a later scroll retry the page; the screen shows request errors itself.
          requested.current.delete(page);
        },
      );
    },
    [fetchPage, pageSize],
  );

  useEffect(() => {
    const visible = pagesForRange(first, last, pageSize, total);
    visible.forEach(load);
    const evict = pagesToEvict(pages.keys(), visible, cachedPageLimit);
    if (evict.length) {
      for (const page of evict) requested.current.delete(page);
      setPages((current) => {
        const next = new Map(current);
        for (const page of evict) next.delete(page);
        return next;
      });
    }
  }, [first, last, pageSize, total, load, pages]);

  useEffect(() => {
    if (selectedIndex !== null && selectedIndex >= 0 && selectedIndex < total) virtualizer.scrollToIndex(selectedIndex, { align: 'auto' });
  }, [selectedIndex, total, virtualizer]);

  const template = columns.map((column) => column.width).join(' ');
  const rowAt = (index: number): Row | undefined => pages.get(Math.floor(index / pageSize))?.[index % pageSize];

  return (
    <div className="vtable" data-testid={testId} role="table" aria-label={label} aria-rowcount={total}>
      <div className="vtable-head" role="row" style={{ gridTemplateColumns: template }}>
        {columns.map((column) => (
          <div key={column.key} role="columnheader" className={column.align === 'right' ? 'cell-right' : undefined}>
            {column.header}
          </div>
        ))}
      </div>
      <div ref={scroller} className="vtable-body" style={{ height: Math.min(height, Math.max(rowHeight, total * rowHeight) + 2) }} tabIndex={0}>
        <div style={{ height: virtualizer.getTotalSize(), position: 'relative' }}>
          {items.map((item) => {
            const row = rowAt(item.index);
            const selected = item.index === selectedIndex;
            const classes = ['vtable-row', selected ? 'is-selected' : '', row && rowClassName ? rowClassName(row, item.index) : '']
              .filter(Boolean)
              .join(' ');
            return (
              <div
                key={item.key}
                role="row"
                aria-rowindex={item.index + 1}
                aria-selected={onSelect ? selected : undefined}
                className={classes}
                data-testid={row && rowTestId ? rowTestId(row, item.index) : undefined}
                style={{ gridTemplateColumns: template, height: item.size, transform: `translateY(${item.start}px)` }}
                onClick={row && onSelect ? () => onSelect(item.index, row) : undefined}
              >
                {row
                  ? columns.map((column) => (
                      <div key={column.key} role="cell" className={column.align === 'right' ? 'cell-right' : undefined}>
                        {column.render(row)}
                      </div>
                    ))
                  : <div role="cell" className="cell-pending">…</div>}
              </div>
            );
          })}
        </div>
      </div>
    </div>
  );
}

/** fetchPage over rows already in memory (short lists: preview rows, import history). */
export function pagesFromArray<Row>(rows: Row[]): (offset: number, limit: number) => Promise<Row[]> {
  return (offset, limit) => Promise.resolve(rows.slice(offset, offset + limit));
}
