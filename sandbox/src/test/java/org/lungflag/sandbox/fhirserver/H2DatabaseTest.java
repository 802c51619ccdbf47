package org.lungflag.sandbox.fhirserver;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import java.nio.file.Path;
import java.sql.Connection;
import java.sql.DriverManager;
import java.sql.SQLException;
import java.util.Optional;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** The database behind a sandbox server, without HAPI: where it lives and what closing it leaves behind. */
class H2DatabaseTest {

    @Test
    void inMemoryDatabaseIsGoneAfterClose() throws SQLException {
        H2Database database = H2Database.open(Optional.empty());
        String name = database.description().substring("in-memory database ".length());
        try (Connection connection = database.dataSource().getConnection()) {
            connection.createStatement().execute("create table kept(id int)");
        }

        database.close();

        // IFEXISTS refuses to create a new, empty database of that name: it must no longer exist.
        assertThatThrownBy(() -> DriverManager.getConnection("jdbc:h2:mem:" + name + ";IFEXISTS=TRUE", "sa", ""))
                .isInstanceOf(SQLException.class);
    }

    @Test
    void fileDatabaseKeepsItsTablesForTheNextOpen(@TempDir Path directory) throws SQLException {
        try (H2Database first = H2Database.open(Optional.of(directory));
                Connection connection = first.dataSource().getConnection()) {
            connection.createStatement().execute("create table kept(id int)");
            connection.createStatement().execute("insert into kept values (7)");
        }

        try (H2Database second = H2Database.open(Optional.of(directory));
                Connection connection = second.dataSource().getConnection()) {
            var rows = connection.createStatement().executeQuery("select id from kept");
            assertThat(rows.next()).isTrue();
            assertThat(rows.getInt(1)).isEqualTo(7);
        }
        assertThat(directory.resolve(H2Database.FILE_STEM + ".mv.db")).exists();
    }
}
