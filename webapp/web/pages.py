from flask import Blueprint

bp = Blueprint("pages", __name__)
