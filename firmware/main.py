import app

app.run()
