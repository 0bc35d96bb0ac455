package dev.stopline.wire;

import java.util.AbstractMap;
import java.util.Collection;
import java.util.Collections;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.Set;

/**
 * An unmodifiable, insertion-ordered map whose backing map nobody else holds. The records of this
 * package copy every map they are given, unless it is one of these: the snapshot reader builds its maps
 * fresh and hands them over with {@link #adopt}, so a parsed snapshot is not copied a second time (the
 * copies were a few per cent of the ingest in a flight recording of the ingest benchmark).
 */
final class ReadOnlyMap<K, V> extends AbstractMap<K, V> {
    private final Map<K, V> view;

    private ReadOnlyMap(LinkedHashMap<K, V> owned) {
        this.view = Collections.unmodifiableMap(owned);
    }

    /** {@code map} itself if it is one of these, else an unmodifiable copy in its iteration order. */
    static <K, V> Map<K, V> copyOf(Map<K, V> map) {
        return map instanceof ReadOnlyMap<K, V> ? map : new ReadOnlyMap<>(new LinkedHashMap<>(map));
    }

    /** Wraps a map the caller has just built and will not touch again. */
    static <K, V> Map<K, V> adopt(LinkedHashMap<K, V> fresh) {
        return new ReadOnlyMap<>(fresh);
    }

    @Override
    public V get(Object key) {
        return view.get(key);
    }

    @Override
    public boolean containsKey(Object key) {
        return view.containsKey(key);
    }

    @Override
    public int size() {
        return view.size();
    }

    @Override
    public boolean isEmpty() {
        return view.isEmpty();
    }

    @Override
    public Set<K> keySet() {
        return view.keySet();
    }

    @Override
    public Collection<V> values() {
        return view.values();
    }

    @Override
    public Set<Entry<K, V>> entrySet() {
        return view.entrySet();
    }
}
