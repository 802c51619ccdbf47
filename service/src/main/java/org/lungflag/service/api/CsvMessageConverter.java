package org.lungflag.service.api;

import java.io.IOException;
import java.io.OutputStreamWriter;
import java.io.Writer;
import java.lang.reflect.RecordComponent;
import java.lang.reflect.Type;
import java.nio.charset.StandardCharsets;
import java.util.List;
import org.springframework.http.HttpInputMessage;
import org.springframework.http.HttpOutputMessage;
import org.springframework.http.MediaType;
import org.springframework.http.converter.AbstractGenericHttpMessageConverter;
import org.springframework.http.converter.HttpMessageNotReadableException;

/**
 * Writes any list of records as CSV (RFC 4180: a header of the record's component names, fields quoted when they
 * hold a comma, quote or line break; UTF-8). A cell that would start with {@code = + - @} gets a leading apostrophe,
 * so a spreadsheet does not run it as a formula.
 */
class CsvMessageConverter extends AbstractGenericHttpMessageConverter<List<?>> {

    static final MediaType TEXT_CSV = new MediaType("text", "csv", StandardCharsets.UTF_8);

    CsvMessageConverter() {
        super(TEXT_CSV, new MediaType("text", "csv"));
    }

    @Override
    public boolean canRead(Type type, Class<?> contextClass, MediaType mediaType) {
        return false;
    }

    @Override
    protected boolean supports(Class<?> clazz) {
        return List.class.isAssignableFrom(clazz);
    }

    @Override
    public boolean canWrite(Type type, Class<?> clazz, MediaType mediaType) {
        return List.class.isAssignableFrom(clazz) && (mediaType == null || TEXT_CSV.isCompatibleWith(mediaType));
    }

    @Override
    protected void writeInternal(List<?> rows, Type type, HttpOutputMessage output) throws IOException {
        output.getHeaders().setContentType(TEXT_CSV);
        output.getHeaders().set("Content-Disposition", "attachment; filename=\"lungflag.csv\"");
        Writer w = new OutputStreamWriter(output.getBody(), StandardCharsets.UTF_8);
        RecordComponent[] components = null;
        for (Object row : rows) {
            if (components == null) {
                if (!row.getClass().isRecord()) {
                    throw new IllegalStateException("CSV export needs a list of records");
                }
                components = row.getClass().getRecordComponents();
                line(w, components, null);
            }
            line(w, components, row);
        }
        if (components == null) {
            // an empty list: still the header, from the declared element type (List<SomeRecord>)
            if (type instanceof java.lang.reflect.ParameterizedType p
                    && p.getActualTypeArguments().length == 1
                    && p.getActualTypeArguments()[0] instanceof Class<?> element
                    && element.isRecord()) {
                line(w, element.getRecordComponents(), null);
            } else {
                w.write("\r\n");
            }
        }
        w.flush();
    }

    private static void line(Writer w, RecordComponent[] components, Object row) throws IOException {
        for (int i = 0; i < components.length; i++) {
            if (i > 0) {
                w.write(',');
            }
            if (row == null) {
                w.write(components[i].getName());
            } else {
                Object value;
                try {
                    value = components[i].getAccessor().invoke(row);
                } catch (ReflectiveOperationException e) {
                    throw new IllegalStateException(e);
                }
                w.write(cell(value));
            }
        }
        w.write("\r\n");
    }

    static String cell(Object value) {
        if (value == null) {
            return "";
        }
        String s = value.toString();
        if (!s.isEmpty() && "=+-@".indexOf(s.charAt(0)) >= 0 && !(value instanceof Number)) {
            s = "'" + s;
        }
        if (s.contains(",") || s.contains("\"") || s.contains("\n") || s.contains("\r")) {
            return "\"" + s.replace("\"", "\"\"") + "\"";
        }
        return s;
    }

    @Override
    protected List<?> readInternal(Class<? extends List<?>> clazz, HttpInputMessage input) {
        throw new HttpMessageNotReadableException("CSV is an export format only", input);
    }

    @Override
    public List<?> read(Type type, Class<?> contextClass, HttpInputMessage input) {
        throw new HttpMessageNotReadableException("CSV is an export format only", input);
    }
}
